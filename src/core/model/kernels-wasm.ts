/**
 * The network's matrix products in WebAssembly SIMD (`core/wasm/network.wat`): f64x2, register
 * tiles of 3×6 outputs, strips kept in cache. Same sums in the same order as `kernels-js.ts`
 * (see there and in the .wat), so the bits are the same.
 *
 * The scalar loops skip a block of terms whose coefficients are all zero; the SIMD kernels add
 * them. Adding c·x with c = ±0 leaves a sum unchanged when x is finite, because these sums
 * start at +0 and a sum of doubles that starts at +0 is never −0 in round-to-nearest. So the
 * SIMD kernels run only when the other factor is finite everywhere (checked in WebAssembly, a
 * small fraction of the product's cost) and hand non-finite operands to the scalar loops.
 */
import type { KernelSpace, MatrixKernels } from './kernels';
import * as js from './kernels-js';
import { growTo, wasmInstance } from '../wasm/load';

interface NetworkExports {
  memory: WebAssembly.Memory;
  dense(w: number, bias: number, x: number, n: number, fanIn: number, units: number, dst: number, flags: number, pack: number): void;
  outer(g: number, d: number, x: number, n: number, fanIn: number, units: number, pack: number): void;
  outerBias(gb: number, d: number, n: number, units: number): void;
  backprop(w: number, d: number, n: number, fanIn: number, units: number, dst: number, accumulate: number, zero: number, pack: number): void;
  finite(p: number, count: number): number;
  relu(a: number, f: number, d1: number, n: number): void;
  hadamard(x: number, y: number, n: number, dst: number): void;
  rDelta(rdh: number, d1: number, dh: number, d2: number, ra: number, n: number, dst: number): void;
}

const align16 = (bytes: number): number => (bytes + 15) & ~15;

/**
 * SIMD kernels and the arrays, in one fresh instance's memory, or null when the engine lacks
 * WebAssembly SIMD or the memory cannot grow to hold them.
 */
export function wasmKernels(lengths: readonly number[], widest: number): KernelSpace | null {
  const ex = wasmInstance('network') as unknown as NetworkExports | null;
  if (ex === null) return null;
  // Partial tiles read up to two rows and a few columns past an operand (never write there).
  const slack = 8 * (2 * widest + 16);
  const zero = 0;
  // Scratch for packed panels: Wᵀ of `dense`, a 256-row chunk of x and d for `outer`, six columns of W for `backprop`.
  const pack = 256;
  const packLength = Math.max((widest + 1) * (widest + 6), 256 * (2 * widest + 9), 6 * widest);
  let end = align16(pack + 8 * packLength + slack);
  const offsets = lengths.map((n) => {
    const at = end;
    end = align16(at + 8 * n + slack);
    return at;
  });
  if (!growTo(ex.memory, end)) return null;
  const buffer = ex.memory.buffer;
  const arrays = lengths.map((n, k) => new Float64Array(buffer, offsets[k], n));
  const ours = (...xs: Float64Array[]): boolean => xs.every((x) => x.buffer === buffer);
  const kernels: MatrixKernels = {
    kind: 'simd',
    dense(src, p, inp, n, dst, withBias, accumulate) {
      if (!ours(src, inp, dst)) return js.dense(src, p, inp, n, dst, withBias, accumulate);
      const at = src.byteOffset;
      ex.dense(at + 8 * p.wOff, at + 8 * p.bOff, inp.byteOffset, n, p.fanIn, p.units, dst.byteOffset, (withBias ? 1 : 0) | (accumulate ? 2 : 0), pack);
    },
    outer(g, p, d, inp, n, withBias) {
      if (!ours(g, d, inp) || ex.finite(inp.byteOffset, n * p.fanIn) === 0) return js.accumulateOuter(g, p, d, inp, n, withBias);
      const at = g.byteOffset;
      ex.outer(at + 8 * p.wOff, d.byteOffset, inp.byteOffset, n, p.fanIn, p.units, pack);
      if (withBias) ex.outerBias(at + 8 * p.bOff, d.byteOffset, n, p.units);
    },
    backprop(src, p, d, n, dst, accumulate) {
      const w = src.byteOffset + 8 * p.wOff;
      if (!ours(src, d, dst) || ex.finite(w, p.units * p.fanIn) === 0) return js.backprop(src, p, d, n, dst, accumulate);
      ex.backprop(w, d.byteOffset, n, p.fanIn, p.units, dst.byteOffset, accumulate ? 1 : 0, zero, pack);
    },
    hadamard(x, y, n, dst) {
      if (!ours(x, y, dst)) return js.hadamard(x, y, n, dst);
      ex.hadamard(x.byteOffset, y.byteOffset, n, dst.byteOffset);
    },
    rDelta(rdh, d1, dh, d2, ra, n, dst) {
      if (!ours(rdh, d1, dh, d2, ra, dst)) return js.rDelta(rdh, d1, dh, d2, ra, n, dst);
      ex.rDelta(rdh.byteOffset, d1.byteOffset, dh.byteOffset, d2.byteOffset, ra.byteOffset, n, dst.byteOffset);
    },
    relu(a, f, d1, n) {
      if (!ours(a, f, d1)) return js.relu(a, f, d1, n);
      ex.relu(a.byteOffset, f.byteOffset, d1.byteOffset, n);
    },
  };
  return { kernels, arrays };
}
