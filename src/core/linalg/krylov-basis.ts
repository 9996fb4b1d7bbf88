/**
 * The Lanczos basis in one block of memory, re-orthogonalized by blocked classical
 * Gram–Schmidt: h = Qᵀw as four dot products per pass over w, then w −= Q h four vectors per
 * pass (the `dots` and `subtractRows` kernels of `core/wasm/eigen.wat`), instead of one dot
 * product and one update per basis vector. The first pass's update and the second pass's dot
 * products share one sweep (`subtractThenDots`: a chunk's update beside the previous chunk's
 * dot products, whose rows are still in cache), so a step reads the basis from memory three
 * times, not four, with the same bits as the two kernels one after the other. Partial
 * re-orthogonalization's sweep (`projectOut`) reads it once for the dot products and subtracts
 * only the components it asks for. Where the engine lacks WebAssembly SIMD the vectors are
 * plain arrays and the loops are JavaScript. A readout: the sums are ordered differently from
 * one-vector-at-a-time code and agree with it to rounding.
 */
import { growTo, wasmInstance } from '../wasm/load';

interface KernelExports {
  memory: WebAssembly.Memory;
  subtractRows(dst: number, src: number, stride: number, coef: number, count: number, len: number): void;
  dots(out: number, src: number, stride: number, count: number, v: number, len: number): void;
  subtractThenDots(dst: number, src: number, stride: number, coef: number, count: number, len: number, out: number, acc: number, chunk: number): void;
}

/** Doubles before the first vector: the kernels' own bytes, then the coefficient scratch. */
const HEAD = 32;

/**
 * Bytes of basis rows one chunk of the fused sweep touches: its update reads them from memory
 * and the next chunk's loop reads them again from cache (a core's L2, or the L3 that takes what
 * L2 drops). On the machine of test/bench/BENCHMARKS.md (1 MiB L2 a core, 32 MiB L3) 2 MiB was
 * among the best of 0.25–4 MiB at 30–90 vectors of 85 002: smaller chunks read each row as short
 * streams, larger ones from farther (common practice: tune the block to the cache).
 */
const CHUNK_BYTES = 2 * 1024 * 1024;

/**
 * Entries per chunk of the fused sweep (`subtractThenDots`) over `count` basis vectors.
 * @param count - vectors in the basis.
 * @returns CHUNK_BYTES / (8·count) rounded down to even, at least 64 (even keeps the two-lane
 *   sums' pairing, so any even value gives the same bits).
 */
export function chunkEntries(count: number): number {
  return Math.max(64, Math.floor(CHUNK_BYTES / (8 * Math.max(1, count))) & ~1);
}

/** A growing set of n-vectors that can orthogonalize a vector against all of them. */
export class KrylovBasis {
  /** The vectors, in order; views of the store's memory (replaced, not moved, when it grows). */
  readonly vectors: Float64Array[] = [];
  private ex: KernelExports | null;
  private capacity = 0;
  /** Vectors the coefficient scratch has room for. */
  private readonly slots: number;
  private readonly scratch: number;

  /**
   * @param n - vector length.
   * @param expected - vectors the run will probably hold (memory grows beyond it when needed).
   * @param simd - false forces plain arrays and JavaScript loops.
   */
  constructor(readonly n: number, expected: number, simd = true) {
    this.ex = simd ? (wasmInstance('eigen') as unknown as KernelExports | null) : null;
    // [HEAD | pass-1 coefficients | pass-2 coefficients | two-lane sums (two per vector) | w | vectors]
    this.slots = 2 * Math.ceil(Math.max(16, expected + 8) / 2);
    this.scratch = HEAD + 4 * this.slots;
    if (this.ex !== null && !this.reserve(Math.max(1, expected))) this.ex = null;
  }

  /** Appends a copy of `v` (each entry divided by `divisor` when one is given) and returns the stored vector. */
  push(v: Float64Array, divisor?: number): Float64Array {
    if (this.ex !== null && this.vectors.length >= this.capacity && !this.reserve(Math.max(8, 2 * this.capacity))) this.ex = null;
    let stored: Float64Array;
    if (this.ex === null) {
      // Without the kernels (or once memory ran out) vectors are plain copies; earlier views stay valid.
      stored = new Float64Array(this.n);
    } else {
      const at = this.vectorAt(this.vectors.length);
      stored = new Float64Array(this.ex.memory.buffer, 8 * at, this.n);
    }
    if (divisor === undefined) stored.set(v.subarray(0, this.n));
    else for (let i = 0; i < this.n; i++) stored[i] = v[i] / divisor;
    this.vectors.push(stored);
    return stored;
  }

  /**
   * w ← w − Q Qᵀ w twice (CGS2: "twice is enough", Giraud, Langou & Rozložník 2005) against every
   * stored vector; returns the first pass's coefficient of vector `index` (or 0 when index < 0).
   */
  orthogonalize(w: Float64Array, index: number): number {
    const m = this.vectors.length;
    if (m === 0) return 0;
    const ex = this.ex;
    if (ex === null || !this.vectors.every((q) => q.buffer === ex.memory.buffer)) return plainOrthogonalize(w, this.vectors, index);
    const n = this.n;
    const buf = new Float64Array(ex.memory.buffer);
    const h1 = HEAD;
    const h2 = HEAD + this.slots;
    const acc = HEAD + 2 * this.slots;
    const wAt = this.scratch;
    buf.set(w, wAt);
    const q0 = this.vectorAt(0);
    ex.dots(8 * h1, 8 * q0, 8 * n, m, 8 * wAt, n);
    const correction = index >= 0 ? buf[h1 + index] : 0;
    ex.subtractThenDots(8 * wAt, 8 * q0, 8 * n, 8 * h1, m, n, 8 * h2, 8 * acc, chunkEntries(m));
    ex.subtractRows(8 * wAt, 8 * q0, 8 * n, 8 * h2, m, n);
    w.set(buf.subarray(wAt, wAt + n));
    return correction;
  }

  /**
   * One classical Gram–Schmidt pass for a vector already close to orthogonal to the basis (partial
   * re-orthogonalization): h = Qᵀw against every stored vector, then w −= h_k q_k only over the
   * runs of k where |h_k| > `threshold`, runs fewer than `gap` apart merged. Over a semi-orthogonal
   * basis one pass leaves overlaps of order m·√ε·|h_k|, far below the threshold, so the second pass
   * of {@link orthogonalize} is not needed here.
   * @returns h (a copy) and the runs [from, to) subtracted.
   */
  projectOut(w: Float64Array, threshold: number, gap: number): { h: Float64Array; runs: Array<[number, number]> } {
    const m = this.vectors.length;
    const ex = this.ex;
    const wasm = ex !== null && this.vectors.every((q) => q.buffer === ex.memory.buffer);
    let h: Float64Array;
    if (wasm) {
      const buf = new Float64Array(ex.memory.buffer);
      buf.set(w, this.scratch);
      ex.dots(8 * HEAD, 8 * this.vectorAt(0), 8 * this.n, m, 8 * this.scratch, this.n);
      h = buf.slice(HEAD, HEAD + m);
    } else h = plainDots(w, this.vectors);
    const runs: Array<[number, number]> = [];
    for (let k = 0; k < m; k++) {
      if (!(Math.abs(h[k]) > threshold)) continue;
      const last = runs.length > 0 ? runs[runs.length - 1] : null;
      if (last !== null && k - last[1] < gap) last[1] = k + 1;
      else runs.push([k, k + 1]);
    }
    if (runs.length === 0) return { h, runs };
    if (wasm) {
      // The coefficients are still where `dots` wrote them.
      const buf = new Float64Array(ex.memory.buffer);
      for (const [from, to] of runs) ex.subtractRows(8 * this.scratch, 8 * this.vectorAt(from), 8 * this.n, 8 * (HEAD + from), to - from, this.n);
      w.set(buf.subarray(this.scratch, this.scratch + this.n));
    } else for (const [from, to] of runs) plainSubtract(w, this.vectors, h, from, to);
    return { h, runs };
  }

  private vectorAt(k: number): number {
    return this.scratch + this.n + k * this.n;
  }

  /** Room for `count` vectors; re-creates every view when the memory moved. */
  private reserve(count: number): boolean {
    const ex = this.ex as KernelExports;
    if (count > this.slots) return false; // the coefficient scratch is sized for `expected`
    if (!growTo(ex.memory, 8 * (this.vectorAt(count) + 16))) return false;
    this.capacity = count;
    const buffer = ex.memory.buffer;
    for (let k = 0; k < this.vectors.length; k++) {
      if (this.vectors[k].buffer !== buffer) this.vectors[k] = new Float64Array(buffer, 8 * this.vectorAt(k), this.n);
    }
    return true;
  }
}

/** One dot product and one update per vector, in JavaScript (the fallback). */
function plainOrthogonalize(w: Float64Array, basis: readonly Float64Array[], index: number): number {
  let correction = 0;
  for (let pass = 0; pass < 2; pass++) {
    const h = plainDots(w, basis);
    plainSubtract(w, basis, h, 0, basis.length);
    if (pass === 0 && index >= 0) correction = h[index];
  }
  return correction;
}

/** h_k = q_kᵀw for every basis vector, one dot product each (the fallback). */
function plainDots(w: Float64Array, basis: readonly Float64Array[]): Float64Array {
  const h = new Float64Array(basis.length);
  for (let k = 0; k < basis.length; k++) {
    const q = basis[k];
    let s = 0;
    for (let i = 0; i < w.length; i++) s += q[i] * w[i];
    h[k] = s;
  }
  return h;
}

/** w −= h_k q_k for from ≤ k < to, one vector at a time (the fallback). */
function plainSubtract(w: Float64Array, basis: readonly Float64Array[], h: Float64Array, from: number, to: number): void {
  for (let k = from; k < to; k++) {
    const q = basis[k];
    const c = h[k];
    for (let i = 0; i < w.length; i++) w[i] -= c * q[i];
  }
}
