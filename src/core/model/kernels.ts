/**
 * The matrix products a dense network is made of, behind one interface with two
 * implementations that give identical bits: WebAssembly SIMD (`kernels-wasm.ts`, over the
 * assembled `core/wasm/network.wat`) where the engine has it, plain JavaScript
 * (`kernels-js.ts`) everywhere else. Both add each output's terms in the same order with every
 * product rounded on its own (no fused multiply-add), so which one ran never shows in a
 * trajectory, a fingerprint or a replay.
 */
import * as js from './kernels-js';
import { wasmKernels } from './kernels-wasm';

/** Where a layer's weight block `[units, fanIn]` and bias `[units]` sit in the flat parameter vector. */
export interface LayerShape {
  readonly fanIn: number;
  readonly units: number;
  readonly wOff: number;
  readonly bOff: number;
}

/**
 * The three products, over `Float64Array`s from {@link matrixKernels} (the SIMD kernels work in
 * their own memory; given other arrays they run the scalar loops). Matrices are row-major, one
 * row per example.
 */
export interface MatrixKernels {
  /** `simd` for the WebAssembly kernels, `scalar` for plain JavaScript. */
  readonly kind: 'simd' | 'scalar';
  /** dst[r, o] (=|+=) Σ_i M[o, i]·inp[r, i] (+ bias[o]), i ascending; M the layer's weight block of `src`. */
  dense(src: Float64Array, p: LayerShape, inp: Float64Array, n: number, dst: Float64Array, withBias: boolean, accumulate: boolean): void;
  /** g_W[o, i] += Σ_r d[r, o]·inp[r, i] (and g_b[o] += Σ_r d[r, o] with `withBias`), r ascending. */
  outer(g: Float64Array, p: LayerShape, d: Float64Array, inp: Float64Array, n: number, withBias: boolean): void;
  /** dst[r, i] (=|+=) Σ_o M[o, i]·d[r, o], o ascending — the transpose product. */
  backprop(src: Float64Array, p: LayerShape, d: Float64Array, n: number, dst: Float64Array, accumulate: boolean): void;
  /** dst[i] = x[i]·y[i] for i < n (the chain rule's elementwise products: δa = δh ⊙ f′). */
  hadamard(x: Float64Array, y: Float64Array, n: number, dst: Float64Array): void;
  /** dst[i] = rdh[i]·d1[i] + dh[i]·d2[i]·ra[i] for i < n (R{δa} of the R-operator, in that order). */
  rDelta(rdh: Float64Array, d1: Float64Array, dh: Float64Array, d2: Float64Array, ra: Float64Array, n: number, dst: Float64Array): void;
  /** The built-in ReLU on a[0..n): f = a where a > 0 else +0, f′ = 1 where a > 0 else +0 (f″ is not written). */
  relu(a: Float64Array, f: Float64Array, d1: Float64Array, n: number): void;
}

/** The plain-JavaScript kernels (the reference the SIMD kernels match). */
export const scalarKernels: MatrixKernels = {
  kind: 'scalar',
  dense: js.dense,
  outer: js.accumulateOuter,
  backprop: js.backprop,
  hadamard: js.hadamard,
  rDelta: js.rDelta,
  relu: js.relu,
};

/** Kernels with the zeroed work arrays they run on. */
export interface KernelSpace {
  readonly kernels: MatrixKernels;
  /** One array per requested length, in order. */
  readonly arrays: Float64Array[];
  /**
   * The same products over the same arrays with each multiply-add fused into one rounding
   * (WebAssembly relaxed SIMD), or null where the engine lacks it. Faster, and different in the
   * last bits from `kernels` and from engine to engine: for readouts, never for a trajectory.
   */
  readonly fused: MatrixKernels | null;
}

/**
 * Kernels for one network and its work arrays: the SIMD kernels with the arrays in a memory of
 * their own (grown once, so no array is ever detached) when the engine has WebAssembly SIMD,
 * `simd` is not false and the memory can hold them; else the scalar kernels over plain arrays.
 * @param lengths - lengths of the arrays to allocate.
 * @param widest - the largest fanIn or units of any layer (sizes the SIMD scratch space).
 * @param wider - the widest side of a block pass's products (block size × the widest layer's units), when wider than `widest`.
 */
export function matrixKernels(lengths: readonly number[], widest: number, simd = true, wider = widest): KernelSpace {
  return (simd ? wasmKernels(lengths, widest, wider) : null) ?? { kernels: scalarKernels, arrays: lengths.map((n) => new Float64Array(n)), fused: null };
}
