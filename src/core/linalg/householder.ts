/**
 * Householder reduction of a dense symmetric matrix to tridiagonal form, A = Q T Qᵀ.
 *
 * Reference: Golub & Van Loan, *Matrix Computations*, 4th ed., §8.3.1 (Householder
 * tridiagonalization). Our variant works on the rows of a row-major lower triangle, from the
 * last row upwards, so that every inner loop runs over contiguous memory:
 *
 * 1. Step i (i = n−1 … 2) takes x = A[i, 0..i−1] and builds the reflector
 *    H_i = I − u uᵀ / h with H_i x = α e_{i−1}; α becomes the subdiagonal entry T[i, i−1].
 * 2. The leading i×i block B is replaced by H_i B H_i via the rank-2 update
 *    B ← B − u qᵀ − q uᵀ with p = B u / h, K = uᵀp / (2h), q = p − K u (only j ≤ r is touched).
 * 3. The rank-2 update of step i is fused with the matrix-vector product of step i−1: row i−1
 *    is updated first (it holds the next x), then every other row is updated and immediately
 *    multiplied with the next u. This halves the memory traffic of the reduction.
 *
 * The reflector u of step i stays in A[i, 0..i−1] (with h in `h[i]`), so Q = H_{n−1} ⋯ H_2 can
 * be applied later to any vector at O(n²) cost ({@link applyReflectors}).
 *
 * The fused row loop (step 3) runs in a WebAssembly SIMD kernel (`simd.ts`, two doubles per
 * instruction) when the engine supports it, else in the scalar loop below; both are tested.
 */

import type { SimdKernel } from './simd';
import { simdKernel, simdMemory } from './simd';

// Math functions bound once: global lookups inside hot loops are slow when the code runs in a
// vm context (as under jest), and binding them costs nothing elsewhere.
const { abs, max, sqrt } = Math;

/** Tridiagonal matrix: `diagonal[i]` = T[i, i]; `subdiagonal[i]` = T[i, i−1] (`subdiagonal[0]` = 0). */
export interface Tridiagonal {
  readonly diagonal: Float64Array;
  readonly subdiagonal: Float64Array;
}

/** Result of {@link tridiagonalize}: T and the compact reflectors that define Q. */
export interface HouseholderReduction extends Tridiagonal {
  /** Order n. */
  readonly n: number;
  /** The working matrix: row i, columns 0..i−1 hold the reflector vector u of step i. */
  readonly reflectors: Float64Array;
  /** h[i] = uᵀu / 2 of step i, or 0 when step i needed no reflection. */
  readonly h: Float64Array;
}

/**
 * Reduces the symmetric matrix `a` (n×n, row-major; only the lower triangle j ≤ i is read)
 * to tridiagonal T = Qᵀ A Q by Householder reflections (Golub & Van Loan 4th ed., §8.3.1).
 *
 * @param a - n×n row-major matrix; **overwritten** with the reflectors (copy it first to keep it).
 * @param n - order of the matrix.
 * @param options - `simd: false` forces the scalar loop (the SIMD kernel of `simd.ts` is used by default).
 * @returns T and the reflectors, stored in `a`.
 */
export function tridiagonalize(a: Float64Array, n: number, options: TridiagonalizeOptions = {}): HouseholderReduction {
  if (!Number.isInteger(n) || n < 0) throw new RangeError(`matrix order must be a non-negative integer, got ${n}`);
  if (a.length < n * n) throw new RangeError(`matrix storage needs ${n * n} entries for order ${n}, got ${a.length}`);
  const kernel = options.simd !== false && n >= SIMD_MIN_ORDER ? simdKernel() : null;
  if (kernel === null) {
    const w = { a, pu: new Float64Array(n), pq: new Float64Array(n), cu: new Float64Array(n), p: new Float64Array(n) };
    return reduceRows(w, n, null);
  }
  // Work inside the kernel's memory: [A | pu | pq | cu | p], then copy the reflectors back into `a`.
  const buf = simdMemory(kernel, 8 * (n * n + 4 * n));
  const nn = n * n;
  const w = {
    a: new Float64Array(buf, 0, nn),
    pu: new Float64Array(buf, 8 * nn, n),
    pq: new Float64Array(buf, 8 * (nn + n), n),
    cu: new Float64Array(buf, 8 * (nn + 2 * n), n),
    p: new Float64Array(buf, 8 * (nn + 3 * n), n),
  };
  w.a.set(a.subarray(0, nn));
  const red = reduceRows(w, n, kernel);
  a.set(w.a);
  return { ...red, reflectors: a };
}

/** Options of {@link tridiagonalize}. */
export interface TridiagonalizeOptions {
  /** Use the WebAssembly SIMD kernel when available (default true; false forces the scalar loop). */
  simd?: boolean;
}

/** Below this order the scalar loop is as fast as the SIMD kernel. */
const SIMD_MIN_ORDER = 32;
/** Below this many vectors, copying the reflectors into the kernel's memory costs more than it saves. */
const SIMD_MIN_VECTORS = 16;

interface Workspace {
  a: Float64Array;
  pu: Float64Array;
  pq: Float64Array;
  cu: Float64Array;
  p: Float64Array;
}

function reduceRows(ws: Workspace, n: number, kernel: SimdKernel | null): HouseholderReduction {
  const { a, pu, pq, cu, p } = ws;
  const d = new Float64Array(n);
  const e = new Float64Array(n);
  const h = new Float64Array(n);
  // Pending rank-2 update B ← B − pu qᵀ − pq uᵀ on the leading (pendingSize)×(pendingSize) block.
  let pendingSize = 0;
  const puB = pu.byteOffset;
  const pqB = pq.byteOffset;
  const cuB = cu.byteOffset;
  const pB = p.byteOffset;
  for (let i = n - 1; i >= 0; i--) {
    const row = i * n;
    // 1. Bring row i up to date (columns 0..i) with the pending update of step i+1.
    if (pendingSize > 0) {
      const ui = pu[i];
      const qi = pq[i];
      for (let j = 0; j < i; j++) a[row + j] -= ui * pq[j] + qi * pu[j];
      a[row + i] -= 2 * ui * qi;
    }
    d[i] = a[row + i];
    if (i === 0) break;
    // 2. Householder vector for x = A[i, 0..i−1], mapping x to α e_{i−1}.
    let scale = 0;
    for (let j = 0; j < i; j++) scale = max(scale, abs(a[row + j]));
    let hi = 0;
    if (i === 1 || scale === 0) {
      e[i] = a[row + i - 1];
    } else {
      let ss = 0;
      for (let j = 0; j < i; j++) {
        const t = a[row + j] / scale;
        ss += t * t;
      }
      const sigma = scale * sqrt(ss);
      const last = a[row + i - 1];
      const alpha = last >= 0 ? -sigma : sigma;
      hi = sigma * sigma - alpha * last;
      a[row + i - 1] = last - alpha;
      e[i] = alpha;
    }
    h[i] = hi;
    // 3. Fused sweep over rows 0..i−1: finish the pending update and form p = B u.
    const fuse = hi !== 0;
    if (fuse) {
      p.fill(0, 0, i);
      for (let j = 0; j < i; j++) cu[j] = a[row + j];
    }
    if (fuse && pendingSize > 0 && kernel !== null) {
      kernel.sweep(0, 8 * n, puB, pqB, cuB, pB, i);
    } else for (let r = 0; r < i; r++) {
      const rr = r * n;
      const vr = cu[r];
      if (pendingSize > 0) {
        const ur = pu[r];
        const qr = pq[r];
        if (fuse && kernel !== null) {
          const s = kernel.fused(8 * rr, puB, pqB, cuB, pB, r, ur, qr, vr);
          const diag = a[rr + r] - 2 * ur * qr;
          a[rr + r] = diag;
          p[r] += s + diag * vr;
        } else if (fuse) {
          // Two accumulators break the add-latency chain; this loop is the O(n³) hot spot.
          let s0 = 0;
          let s1 = 0;
          let j = 0;
          for (; j + 1 < r; j += 2) {
            const v0 = a[rr + j] - (ur * pq[j] + qr * pu[j]);
            const v1 = a[rr + j + 1] - (ur * pq[j + 1] + qr * pu[j + 1]);
            a[rr + j] = v0;
            a[rr + j + 1] = v1;
            s0 += v0 * cu[j];
            s1 += v1 * cu[j + 1];
            p[j] += v0 * vr;
            p[j + 1] += v1 * vr;
          }
          if (j < r) {
            const v0 = a[rr + j] - (ur * pq[j] + qr * pu[j]);
            a[rr + j] = v0;
            s0 += v0 * cu[j];
            p[j] += v0 * vr;
          }
          const diag = a[rr + r] - 2 * ur * qr;
          a[rr + r] = diag;
          p[r] += s0 + s1 + diag * vr;
        } else {
          for (let j = 0; j < r; j++) a[rr + j] -= ur * pq[j] + qr * pu[j];
          a[rr + r] -= 2 * ur * qr;
        }
      } else if (fuse) {
        let s = 0;
        for (let j = 0; j < r; j++) {
          const v = a[rr + j];
          s += v * cu[j];
          p[j] += v * vr;
        }
        p[r] += s + a[rr + r] * vr;
      }
    }
    // 4. The new pending update: q = p/h − K u with K = uᵀp / (2h²).
    if (fuse) {
      let up = 0;
      for (let j = 0; j < i; j++) {
        p[j] /= hi;
        up += a[row + j] * p[j];
      }
      const k = up / (2 * hi);
      for (let j = 0; j < i; j++) {
        pu[j] = a[row + j];
        pq[j] = p[j] - k * pu[j];
      }
      pendingSize = i;
    } else {
      pendingSize = 0;
    }
  }
  return { n, diagonal: d, subdiagonal: e, reflectors: a, h };
}

/**
 * Applies Q = H_{n−1} ⋯ H_2 of a {@link HouseholderReduction} to `count` vectors stored as the
 * rows of `v` (row k at offset k·n), in place: v_k ← Q v_k. Turns eigenvectors of T into
 * eigenvectors of A (Golub & Van Loan 4th ed., §5.1.6, applying a factored Q).
 */
export function applyReflectors(red: HouseholderReduction, v: Float64Array, count: number): void {
  const { n, reflectors: a, h } = red;
  // Blocks of vectors small enough to stay in cache while every reflector streams past once.
  const block = max(1, Math.floor(VECTOR_BLOCK_BYTES / (8 * max(1, n))));
  const kernel = count >= SIMD_MIN_VECTORS && n >= SIMD_MIN_ORDER ? simdKernel() : null;
  if (kernel !== null) {
    // Reflectors and vectors side by side in the kernel's memory; reflect(u, v, len, h) per pair.
    const nn = n * n;
    const buf = simdMemory(kernel, 8 * (nn + count * n));
    const rw = new Float64Array(buf, 0, nn);
    const vw = new Float64Array(buf, 8 * nn, count * n);
    rw.set(a.subarray(0, nn));
    vw.set(v.subarray(0, count * n));
    for (let k0 = 0; k0 < count; k0 += block) {
      const k1 = Math.min(count, k0 + block);
      for (let i = 2; i < n; i++) {
        if (h[i] === 0) continue;
        for (let k = k0; k < k1; k++) kernel.reflect(8 * i * n, 8 * (nn + k * n), i, h[i]);
      }
    }
    v.set(vw);
    return;
  }
  for (let k0 = 0; k0 < count; k0 += block) {
    const k1 = Math.min(count, k0 + block);
    for (let i = 2; i < n; i++) {
      const hi = h[i];
      if (hi === 0) continue;
      const row = i * n;
      for (let k = k0; k < k1; k++) {
        const off = k * n;
        let s = 0;
        for (let j = 0; j < i; j++) s += a[row + j] * v[off + j];
        const f = s / hi;
        if (f === 0) continue;
        for (let j = 0; j < i; j++) v[off + j] -= f * a[row + j];
      }
    }
  }
}

/** Working-set size for {@link applyReflectors}' vector blocks (about half an L2 cache). */
const VECTOR_BLOCK_BYTES = 256 * 1024;
