/**
 * The three matrix products of the dense network in plain JavaScript: the reference path, the
 * fallback where WebAssembly SIMD is missing (QuickJS, old engines), and the one the SIMD
 * kernels of `core/wasm/network.wat` must match bit for bit. Each output's terms are added in
 * a fixed order (i, r or o ascending); register blocking changes speed, never bits.
 */
import type { LayerShape } from './kernels';
import { activation } from './activations';

const builtinRelu = activation('relu');

/**
 * dst[r, o] (=|+=) Σ_i M[o, i]·inp[r, i] (+ bias[o]) with M the layer's weight block of `src`.
 * Blocked two rows × four outputs (register blocking); each sum still runs over i in
 * order, so the result does not depend on the blocking.
 */
export function dense(src: Float64Array, p: LayerShape, inp: Float64Array, n: number, dst: Float64Array, withBias: boolean, accumulate: boolean): void {
  const { fanIn, units, wOff, bOff } = p;
  const o4 = units - (units % 4);
  const n2 = n - (n % 2);
  let r = 0;
  // Two rows × four outputs: eight independent sums, each input and weight loaded once per block.
  for (; r < n2; r += 2) {
    const ia = r * fanIn, ib = ia + fanIn;
    const oa = r * units, ob = oa + units;
    let o = 0;
    for (; o < o4; o += 4) {
      const w0 = wOff + o * fanIn, w1 = w0 + fanIn, w2 = w1 + fanIn, w3 = w2 + fanIn;
      let a0 = 0, a1 = 0, a2 = 0, a3 = 0;
      if (withBias) { a0 = src[bOff + o]; a1 = src[bOff + o + 1]; a2 = src[bOff + o + 2]; a3 = src[bOff + o + 3]; }
      let b0 = a0, b1 = a1, b2 = a2, b3 = a3;
      for (let i = 0; i < fanIn; i++) {
        const x = inp[ia + i], y = inp[ib + i];
        const v0 = src[w0 + i], v1 = src[w1 + i], v2 = src[w2 + i], v3 = src[w3 + i];
        a0 += v0 * x; a1 += v1 * x; a2 += v2 * x; a3 += v3 * x;
        b0 += v0 * y; b1 += v1 * y; b2 += v2 * y; b3 += v3 * y;
      }
      if (accumulate) {
        dst[oa + o] += a0; dst[oa + o + 1] += a1; dst[oa + o + 2] += a2; dst[oa + o + 3] += a3;
        dst[ob + o] += b0; dst[ob + o + 1] += b1; dst[ob + o + 2] += b2; dst[ob + o + 3] += b3;
      } else {
        dst[oa + o] = a0; dst[oa + o + 1] = a1; dst[oa + o + 2] = a2; dst[oa + o + 3] = a3;
        dst[ob + o] = b0; dst[ob + o + 1] = b1; dst[ob + o + 2] = b2; dst[ob + o + 3] = b3;
      }
    }
    for (; o < units; o++) {
      const wr = wOff + o * fanIn;
      let a = withBias ? src[bOff + o] : 0;
      let b = a;
      for (let i = 0; i < fanIn; i++) { const v = src[wr + i]; a += v * inp[ia + i]; b += v * inp[ib + i]; }
      dst[oa + o] = accumulate ? dst[oa + o] + a : a;
      dst[ob + o] = accumulate ? dst[ob + o] + b : b;
    }
  }
  for (; r < n; r++) {
    const ir = r * fanIn;
    const orow = r * units;
    for (let o = 0; o < units; o++) {
      const wr = wOff + o * fanIn;
      let s = withBias ? src[bOff + o] : 0;
      for (let i = 0; i < fanIn; i++) s += src[wr + i] * inp[ir + i];
      dst[orow + o] = accumulate ? dst[orow + o] + s : s;
    }
  }
}

/**
 * g_W[o, i] += Σ_r d[r, o]·inp[r, i], and g_b[o] += Σ_r d[r, o] when `withBias`.
 * Blocked over four rows r so each gradient entry is loaded and stored once per block; the
 * four terms are added in r order.
 */
export function accumulateOuter(g: Float64Array, p: LayerShape, d: Float64Array, inp: Float64Array, n: number, withBias: boolean): void {
  const { fanIn, units, wOff, bOff } = p;
  const n4 = n - (n % 4);
  let r = 0;
  for (; r < n4; r += 4) {
    const i0 = r * fanIn, i1 = i0 + fanIn, i2 = i1 + fanIn, i3 = i2 + fanIn;
    const d0 = r * units, d1 = d0 + units, d2 = d1 + units, d3 = d2 + units;
    for (let o = 0; o < units; o++) {
      const c0 = d[d0 + o], c1 = d[d1 + o], c2 = d[d2 + o], c3 = d[d3 + o];
      if (c0 === 0 && c1 === 0 && c2 === 0 && c3 === 0) continue;
      if (withBias) g[bOff + o] = (((g[bOff + o] + c0) + c1) + c2) + c3;
      const wr = wOff + o * fanIn;
      for (let i = 0; i < fanIn; i++) {
        g[wr + i] = (((g[wr + i] + c0 * inp[i0 + i]) + c1 * inp[i1 + i]) + c2 * inp[i2 + i]) + c3 * inp[i3 + i];
      }
    }
  }
  for (; r < n; r++) {
    const ir = r * fanIn;
    const drow = r * units;
    for (let o = 0; o < units; o++) {
      const c = d[drow + o];
      if (c === 0) continue;
      if (withBias) g[bOff + o] += c;
      const wr = wOff + o * fanIn;
      for (let i = 0; i < fanIn; i++) g[wr + i] += c * inp[ir + i];
    }
  }
}

/**
 * dst[r, i] (=|+=) Σ_o M[o, i]·d[r, o] — the transpose product with `src`'s weight block.
 * Blocked over four outputs o, added in o order, so each dst entry is loaded once per block.
 */
export function backprop(src: Float64Array, p: LayerShape, d: Float64Array, n: number, dst: Float64Array, accumulate: boolean): void {
  const { fanIn, units, wOff } = p;
  if (!accumulate) dst.fill(0, 0, n * fanIn);
  const o4 = units - (units % 4);
  for (let r = 0; r < n; r++) {
    const ir = r * fanIn;
    const drow = r * units;
    let o = 0;
    for (; o < o4; o += 4) {
      const c0 = d[drow + o], c1 = d[drow + o + 1], c2 = d[drow + o + 2], c3 = d[drow + o + 3];
      if (c0 === 0 && c1 === 0 && c2 === 0 && c3 === 0) continue;
      const w0 = wOff + o * fanIn, w1 = w0 + fanIn, w2 = w1 + fanIn, w3 = w2 + fanIn;
      for (let i = 0; i < fanIn; i++) {
        dst[ir + i] = (((dst[ir + i] + c0 * src[w0 + i]) + c1 * src[w1 + i]) + c2 * src[w2 + i]) + c3 * src[w3 + i];
      }
    }
    for (; o < units; o++) {
      const c = d[drow + o];
      if (c === 0) continue;
      const wr = wOff + o * fanIn;
      for (let i = 0; i < fanIn; i++) dst[ir + i] += c * src[wr + i];
    }
  }
}

/** dst[i] = x[i]·y[i] for i < n. */
export function hadamard(x: Float64Array, y: Float64Array, n: number, dst: Float64Array): void {
  for (let i = 0; i < n; i++) dst[i] = x[i] * y[i];
}

/** dst[i] = rdh[i]·d1[i] + dh[i]·d2[i]·ra[i] for i < n. */
export function rDelta(rdh: Float64Array, d1: Float64Array, dh: Float64Array, d2: Float64Array, ra: Float64Array, n: number, dst: Float64Array): void {
  for (let i = 0; i < n; i++) dst[i] = rdh[i] * d1[i] + dh[i] * d2[i] * ra[i];
}

/** The built-in ReLU's f and f′ on a[0..n) (its own loop in `activations.ts`; f″ not written). */
export function relu(a: Float64Array, f: Float64Array, d1: Float64Array, n: number): void {
  builtinRelu.evaluate(a, f, d1, null, n);
}
