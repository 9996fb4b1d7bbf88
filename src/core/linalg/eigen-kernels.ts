/**
 * The inner loops of the dense eigen-solver behind one interface: WebAssembly SIMD
 * (`core/wasm/eigen.wat`) where the engine has it, plain JavaScript elsewhere. Readout
 * arithmetic: the two agree to rounding (their sums are ordered differently), not bit for bit.
 *
 * All arrays are views of one {@link EigenSpace}; offsets and lengths count doubles.
 */
import { growTo, wasmInstance } from '../wasm/load';

/** The kernels over one space's array `m` (offsets in doubles). */
export interface EigenKernels {
  readonly kind: 'simd' | 'scalar';
  /** p[r] = Σ_j B[r, j]·u[j] for r < m, B symmetric with its lower triangle packed at `a` (row r at a + r(r+1)/2). */
  symv(a: number, m: number, u: number, p: number): void;
  /** dst[j] −= Σ_{k<count} coef[k]·src[k·stride + j] for j < len. */
  subtractRows(dst: number, src: number, stride: number, coef: number, count: number, len: number): void;
  /** out[k] = src[k·stride + ·]·v over len entries, k < count. */
  dots(out: number, src: number, stride: number, count: number, v: number, len: number): void;
  /**
   * A[r, j] −= Σ_{k<count} X[k, r]·Y[k, j] for j ≤ r < m, A's lower triangle packed as for `symv`
   * (X = [U; Q], Y = [Q; U] stacked make it the rank-2k update A − U Qᵀ − Q Uᵀ). `work` is
   * scratch of {@link syr2kWork}(m, count) doubles where the SIMD kernel packs X and Y (the
   * scalar one leaves it alone); the result does not depend on it.
   */
  syr2k(a: number, m: number, x: number, y: number, vStride: number, count: number, work: number): void;
  /** v −= u·(uᵀv)/h over len entries. */
  reflect(u: number, v: number, len: number, h: number): void;
  /** For i = hi down to lo: rows i, i+1 of the matrix at z (row stride `stride`, `cols` entries) rotated by (c[i], s[i]). */
  rotSweep(z: number, stride: number, cols: number, c: number, s: number, lo: number, hi: number): void;
}

/** One array of doubles and the kernels that work on it. */
export interface EigenSpace {
  readonly m: Float64Array;
  readonly kernels: EigenKernels;
}

interface EigenExports {
  memory: WebAssembly.Memory;
  symv(a: number, m: number, u: number, p: number): void;
  subtractRows(dst: number, src: number, stride: number, coef: number, count: number, len: number): void;
  dots(out: number, src: number, stride: number, count: number, v: number, len: number): void;
  syr2k(a: number, m: number, x: number, y: number, vStride: number, count: number, work: number): void;
  reflect(u: number, v: number, len: number, h: number): void;
  rotSweep(z: number, stride: number, cols: number, c: number, s: number, lo: number, hi: number): void;
}

/**
 * Doubles of scratch {@link EigenKernels.syr2k} needs for an update of the leading m×m block
 * with `count` terms: X packed in blocks of 3 rows and Y in blocks of 6 columns, each block
 * `count` deep (at most (m + 2) + (m + 7) entries of each of the `count` vectors).
 */
export function syr2kWork(m: number, count: number): number {
  return (2 * m + 12) * count;
}

/** Doubles the SIMD kernels keep for themselves at the start of their memory. */
const RESERVED = 32;
/** Doubles of slack after the space: partial tiles read a few rows and columns past an operand. */
const SLACK = (width: number): number => 3 * width + 64;

let shared: EigenExports | null | undefined;

/**
 * A space of `length` doubles (zeroed) with its kernels: in the SIMD kernels' memory when
 * `simd` is not false and the engine has WebAssembly SIMD (one instance per realm, reused, so
 * a space is valid until the next call), else a plain array with the scalar kernels.
 * @param width - the longest row any kernel reads (sizes the slack).
 */
export function eigenSpace(length: number, width: number, simd = true): EigenSpace {
  if (simd) {
    if (shared === undefined) shared = wasmInstance('eigen') as unknown as EigenExports | null;
    const ex = shared;
    if (ex !== null && growTo(ex.memory, 8 * (RESERVED + length + SLACK(width)))) {
      const m = new Float64Array(ex.memory.buffer, 8 * RESERVED, length);
      m.fill(0);
      const at = (k: number): number => 8 * (RESERVED + k);
      const kernels: EigenKernels = {
        kind: 'simd',
        symv: (a, n, u, p) => ex.symv(at(a), n, at(u), at(p)),
        subtractRows: (dst, src, stride, coef, count, len) => ex.subtractRows(at(dst), at(src), 8 * stride, at(coef), count, len),
        dots: (out, src, stride, count, v, len) => ex.dots(at(out), at(src), 8 * stride, count, at(v), len),
        syr2k: (a, n, x, y, vStride, count, work) => ex.syr2k(at(a), n, at(x), at(y), 8 * vStride, count, at(work)),
        reflect: (u, v, len, h) => ex.reflect(at(u), at(v), len, h),
        rotSweep: (z, stride, cols, c, s, lo, hi) => ex.rotSweep(at(z), 8 * stride, cols, at(c), at(s), lo, hi),
      };
      return { m, kernels };
    }
  }
  const m = new Float64Array(length);
  return { m, kernels: scalarEigenKernels(m) };
}

/** The plain-JavaScript kernels over `m`. */
export function scalarEigenKernels(m: Float64Array): EigenKernels {
  return {
    kind: 'scalar',
    symv(a, n, u, p) {
      m.fill(0, p, p + n);
      for (let r = 0; r < n; r++) {
        const row = a + (r * (r + 1)) / 2;
        const ur = m[u + r];
        let s = 0;
        for (let j = 0; j < r; j++) {
          const x = m[row + j];
          s += x * m[u + j];
          m[p + j] += x * ur;
        }
        m[p + r] += s + m[row + r] * ur;
      }
    },
    subtractRows(dst, src, stride, coef, count, len) {
      for (let k = 0; k < count; k++) {
        const c = m[coef + k];
        const row = src + k * stride;
        for (let j = 0; j < len; j++) m[dst + j] -= c * m[row + j];
      }
    },
    dots(out, src, stride, count, v, len) {
      for (let k = 0; k < count; k++) {
        const row = src + k * stride;
        let s = 0;
        for (let j = 0; j < len; j++) s += m[row + j] * m[v + j];
        m[out + k] = s;
      }
    },
    syr2k(a, n, x, y, vStride, count) {
      for (let r = 0; r < n; r++) {
        const row = a + (r * (r + 1)) / 2;
        for (let j = 0; j <= r; j++) {
          let s = 0;
          for (let k = 0; k < count; k++) s += m[x + k * vStride + r] * m[y + k * vStride + j];
          m[row + j] -= s;
        }
      }
    },
    reflect(u, v, len, h) {
      let s = 0;
      for (let j = 0; j < len; j++) s += m[u + j] * m[v + j];
      const f = s / h;
      for (let j = 0; j < len; j++) m[v + j] -= f * m[u + j];
    },
    rotSweep(z, stride, cols, c, s, lo, hi) {
      for (let i = hi; i >= lo; i--) {
        const ci = m[c + i];
        const si = m[s + i];
        const ra = z + i * stride;
        const rb = ra + stride;
        for (let k = 0; k < cols; k++) {
          const x = m[ra + k];
          const y = m[rb + k];
          m[rb + k] = si * x + ci * y;
          m[ra + k] = ci * x - si * y;
        }
      }
    },
  };
}
