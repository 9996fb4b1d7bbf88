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
 * The same argument lets them skip zero terms: a coefficient matrix with at least
 * {@link SPARSE_ZERO_SHARE} exact zeros (a ReLU layer's outputs and errors) goes to the sparse
 * kernels, which add only the nonzero coefficients' terms, in order; `dense` also needs no bias
 * of −0 there, since its sums start at the bias.
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
  zeros(p: number, count: number): number;
  compact(a: number, lists: number, len: number, listStep: number, entryStep: number, vals: number, offs: number, counts: number, cap: number): number;
  pack16(src: number, rows: number, kStep: number, jStep: number, width: number, dst: number): void;
  sparseProduct(vals: number, offs: number, counts: number, cap: number, lists: number, b: number, panelBytes: number, width: number, c: number, cRow: number, i: number, iRow: number, iCol: number, add: number, stage: number): void;
}

/** Rows of a coefficient matrix compacted at a time (the lists' scratch holds this many × the widest layer). */
const SPARSE_ROWS = 256;

/**
 * The share of exact zeros in a coefficient matrix from which the sparse kernels run (a ReLU
 * layer's outputs and back-propagated errors are about half zeros). Measured at 512 × 256 × 256
 * on an idle machine, the sparse path against the tile in one process: 1.04–1.26× the time at
 * a fifth zeros, 0.94–1.02× at 30 %, 0.72–0.79× at half. The sparse loop adds a term at about
 * 60 % of the tile's rate (`npm run bench -- kernels`), so below this share the tile is faster.
 */
export const SPARSE_ZERO_SHARE = 0.3;

const align16 = (bytes: number): number => (bytes + 15) & ~15;

/**
 * SIMD kernels and the arrays, in one fresh instance's memory, or null when the engine lacks
 * WebAssembly SIMD or the memory cannot grow to hold them. `wider` sizes the scratch for a
 * network's block passes, whose products can be that wide on one side.
 */
export function wasmKernels(lengths: readonly number[], widest: number, wider = widest): KernelSpace | null {
  const ex = wasmInstance('network') as unknown as NetworkExports | null;
  if (ex === null) return null;
  // A block pass's products are up to `wider` on one side (never on both): the other is at most `widest`.
  const wide = Math.max(widest, wider);
  // Partial tiles read up to two rows and a few columns past an operand (never write there).
  const slack = 8 * (2 * wide + 16);
  // Scratch for packed panels: Wᵀ of `dense`, a 256-row chunk of x and d for `outer`, W in panels
  // of six columns for `backprop` (units × fanIn rounded up to 6, within the first bound) — or, for
  // the sparse kernels (which never run between a packing and its use by the others),
  // sixteen-column panels of the other factor.
  const wide16 = (wide + 15) & ~15;
  const pack = 256;
  const packLength = Math.max((widest + 1) * (wide + 6), 256 * (2 * wide + 9), Math.max(widest, SPARSE_ROWS) * wide16);
  const sPack = pack;
  // The sparse kernels' coefficient lists (values, panel offsets, lengths), a staging row and a row of zeros.
  const listEntries = SPARSE_ROWS * wide;
  const sVals = align16(pack + 8 * packLength);
  const sOffs = align16(sVals + 8 * listEntries);
  const sCounts = align16(sOffs + 4 * listEntries);
  const stage = align16(sCounts + 4 * Math.max(wide, SPARSE_ROWS));
  const zeroRow = stage + 128;
  let end = align16(zeroRow + 128 + slack);
  const offsets = lengths.map((n) => {
    const at = end;
    end = align16(at + 8 * n + slack);
    return at;
  });
  if (!growTo(ex.memory, end)) return null;
  const buffer = ex.memory.buffer;
  const arrays = lengths.map((n, k) => new Float64Array(buffer, offsets[k], n));
  const scratch = { sPack, sVals, sOffs, sCounts, stage, zeroRow, pack };
  const kernels = kernelTable(ex, buffer, scratch);
  // The readout-only variant (fused multiply-adds) runs on the same memory, so on the same arrays.
  const fx = wasmInstance('networkFused', { network: { memory: ex.memory } }) as unknown as NetworkExports | null;
  const fused = fx === null ? null : kernelTable(fx, buffer, scratch);
  return { kernels, arrays, fused };
}

/** Byte addresses of the kernels' scratch space in the memory (see `wasmKernels`). */
interface Scratch {
  readonly sPack: number;
  readonly sVals: number;
  readonly sOffs: number;
  readonly sCounts: number;
  readonly stage: number;
  readonly zeroRow: number;
  readonly pack: number;
}

/** The kernel table over the exports of a network instance (or of its fused variant) whose memory is `buffer`. */
function kernelTable(ex: NetworkExports, buffer: ArrayBuffer, scratch: Scratch): MatrixKernels {
  const { sPack, sVals, sOffs, sCounts, stage, zeroRow, pack } = scratch;
  const zero = 0;
  const ours = (...xs: Float64Array[]): boolean => xs.every((x) => x.buffer === buffer);
  /**
   * True when the `count` coefficients at byte `at` hold enough exact zeros for the sparse kernels
   * and the result is at least one panel wide (a narrower one wastes most of each sixteen-column pass).
   */
  const sparse = (at: number, count: number, width: number): boolean => width >= 16 && count > 0 && ex.zeros(at, count) >= SPARSE_ZERO_SHARE * count;
  const lists = (a: number, count: number, len: number, listStep: number, entryStep: number): void => {
    ex.compact(a, count, len, listStep, entryStep, sVals, sOffs, sCounts, len);
  };
  return {
    kind: 'simd',
    dense(src, p, inp, n, dst, withBias, accumulate) {
      if (!ours(src, inp, dst)) return js.dense(src, p, inp, n, dst, withBias, accumulate);
      const at = src.byteOffset;
      const { fanIn, units } = p;
      const w = at + 8 * p.wOff;
      const bias = at + 8 * p.bOff;
      // Skipping x = 0 terms needs finite weights and no sum starting at a bias of −0.
      if (sparse(inp.byteOffset, n * fanIn, units) && ex.finite(w, units * fanIn) === 1 && !(withBias && negativeZero(src, p.bOff, units))) {
        ex.pack16(w, fanIn, 8, 8 * fanIn, units, sPack);
        for (let r = 0; r < n; r += SPARSE_ROWS) {
          const rows = Math.min(SPARSE_ROWS, n - r);
          lists(inp.byteOffset + 8 * r * fanIn, rows, fanIn, 8 * fanIn, 8);
          const c = dst.byteOffset + 8 * r * units;
          ex.sparseProduct(sVals, sOffs, sCounts, fanIn, rows, sPack, 128 * fanIn, units, c, 8 * units, withBias ? bias : zeroRow, 0, withBias ? 8 : 0, accumulate ? 1 : 0, stage);
        }
        return;
      }
      ex.dense(w, bias, inp.byteOffset, n, fanIn, units, dst.byteOffset, (withBias ? 1 : 0) | (accumulate ? 2 : 0), pack);
    },
    outer(g, p, d, inp, n, withBias) {
      if (!ours(g, d, inp) || ex.finite(inp.byteOffset, n * p.fanIn) === 0) return js.accumulateOuter(g, p, d, inp, n, withBias);
      const at = g.byteOffset;
      const { fanIn, units } = p;
      if (sparse(d.byteOffset, n * units, fanIn)) {
        const gw = at + 8 * p.wOff;
        for (let r = 0; r < n; r += SPARSE_ROWS) {
          const rows = Math.min(SPARSE_ROWS, n - r);
          ex.pack16(inp.byteOffset + 8 * r * fanIn, rows, 8 * fanIn, 8, fanIn, sPack);
          // one list per output unit o: the rows' d[r, o], r in order
          lists(d.byteOffset + 8 * r * units, units, rows, 8, 8 * units);
          ex.sparseProduct(sVals, sOffs, sCounts, rows, units, sPack, 128 * rows, fanIn, gw, 8 * fanIn, gw, 8 * fanIn, 8, 0, stage);
        }
      } else ex.outer(at + 8 * p.wOff, d.byteOffset, inp.byteOffset, n, fanIn, units, pack);
      if (withBias) ex.outerBias(at + 8 * p.bOff, d.byteOffset, n, p.units);
    },
    backprop(src, p, d, n, dst, accumulate) {
      const w = src.byteOffset + 8 * p.wOff;
      if (!ours(src, d, dst) || ex.finite(w, p.units * p.fanIn) === 0) return js.backprop(src, p, d, n, dst, accumulate);
      const { fanIn, units } = p;
      if (sparse(d.byteOffset, n * units, fanIn)) {
        ex.pack16(w, units, 8 * fanIn, 8, fanIn, sPack);
        for (let r = 0; r < n; r += SPARSE_ROWS) {
          const rows = Math.min(SPARSE_ROWS, n - r);
          lists(d.byteOffset + 8 * r * units, rows, units, 8 * units, 8);
          const c = dst.byteOffset + 8 * r * fanIn;
          ex.sparseProduct(sVals, sOffs, sCounts, units, rows, sPack, 128 * units, fanIn, c, 8 * fanIn, accumulate ? c : zeroRow, accumulate ? 8 * fanIn : 0, accumulate ? 8 : 0, 0, stage);
        }
        return;
      }
      ex.backprop(w, d.byteOffset, n, fanIn, units, dst.byteOffset, accumulate ? 1 : 0, zero, pack);
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
}

/** True when one of the `count` entries of `a` from `offset` is −0 (a sum starting there must add every term). */
function negativeZero(a: Float64Array, offset: number, count: number): boolean {
  for (let k = offset; k < offset + count; k++) if (a[k] === 0 && 1 / a[k] < 0) return true;
  return false;
}
