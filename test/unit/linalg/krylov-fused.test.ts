/**
 * The fused sweep of the re-orthogonalization (`subtractThenDots` in eigen.wat: pass 1's
 * update and pass 2's dot products chunk by chunk) against the two kernels it replaces,
 * `subtractRows` then `dots`, run one after the other: every entry of w and every dot product
 * must come out with the same bits, for every chunk length, basis size and vector length.
 */
import { chunkEntries, KrylovBasis } from '../../../src/core/linalg/krylov-basis';
import { wasmInstance, growTo } from '../../../src/core/wasm/load';
import { Rng } from '../../../src/core/rng';

interface Kernels {
  memory: WebAssembly.Memory;
  subtractRows(dst: number, src: number, stride: number, coef: number, count: number, len: number): void;
  dots(out: number, src: number, stride: number, count: number, v: number, len: number): void;
  subtractThenDots(dst: number, src: number, stride: number, coef: number, count: number, len: number, out: number, acc: number, chunk: number): void;
}

function kernels(): Kernels {
  const ex = wasmInstance('eigen') as unknown as Kernels | null;
  if (ex === null) throw new Error('this engine cannot run the eigen WebAssembly module (SIMD); the fused sweep cannot be tested here');
  return ex;
}

/** Indices where a and b differ in any bit (-0 against +0 included). */
function differingBits(a: Float64Array, b: Float64Array): number[] {
  expect(a).toHaveLength(b.length);
  const x = new BigUint64Array(a.buffer, a.byteOffset, a.length);
  const y = new BigUint64Array(b.buffer.slice(b.byteOffset, b.byteOffset + 8 * b.length));
  const out: number[] = [];
  for (let i = 0; i < a.length; i++) if (x[i] !== y[i]) out.push(i);
  return out;
}

/**
 * One call of the fused kernel and of the two kernels on the same random basis, coefficients
 * and w (each in its own instance); returns the differing entries of w and of the sums.
 */
function compareKernels(count: number, len: number, chunk: number, seed: number): { w: number[]; sums: number[] } {
  const rng = Rng.fromSeed(seed);
  // Entries of several magnitudes, so that any change of summation order shows in the bits.
  const draw = (k: number): Float64Array => {
    const v = rng.fillNormal(new Float64Array(k));
    for (let i = 0; i < k; i++) v[i] *= 2 ** (rng.int(40) - 20);
    return v;
  };
  const basis = draw(count * len);
  const coef = draw(count);
  const w = draw(len);
  // [coef | out | acc | w | basis], in doubles; offsets even so the sums sit on 16 bytes
  const outAt = 2 * Math.ceil(count / 2) + 2;
  const accAt = 2 * outAt;
  const wAt = accAt + 2 * count + 2;
  const qAt = wAt + len + 2;
  const results = [kernels(), kernels()].map((ex, side) => {
    if (!growTo(ex.memory, 8 * (qAt + count * len) + 64)) throw new Error('memory for the comparison could not be allocated');
    const buf = new Float64Array(ex.memory.buffer);
    buf.set(coef, 0);
    buf.set(w, wAt);
    buf.set(basis, qAt);
    if (side === 0) {
      ex.subtractRows(8 * wAt, 8 * qAt, 8 * len, 0, count, len);
      ex.dots(8 * outAt, 8 * qAt, 8 * len, count, 8 * wAt, len);
    } else {
      ex.subtractThenDots(8 * wAt, 8 * qAt, 8 * len, 0, count, len, 8 * outAt, 8 * accAt, chunk);
    }
    return { w: buf.slice(wAt, wAt + len), sums: buf.slice(outAt, outAt + count) };
  });
  return { w: differingBits(results[0].w, results[1].w), sums: differingBits(results[0].sums, results[1].sums) };
}

/** The two-kernel re-orthogonalization as it was before the fused sweep (the reference). */
function twoKernelOrthogonalize(basis: readonly Float64Array[], w: Float64Array, index: number): number {
  const ex = kernels();
  const n = w.length;
  const m = basis.length;
  const wAt = 2 * m + 2;
  const qAt = wAt + n;
  if (!growTo(ex.memory, 8 * (qAt + m * n))) throw new Error('memory for the reference could not be allocated');
  const buf = new Float64Array(ex.memory.buffer);
  basis.forEach((q, k) => buf.set(q, qAt + k * n));
  buf.set(w, wAt);
  let correction = 0;
  for (let pass = 0; pass < 2; pass++) {
    ex.dots(0, 8 * qAt, 8 * n, m, 8 * wAt, n);
    if (pass === 0 && index >= 0) correction = buf[index];
    ex.subtractRows(8 * wAt, 8 * qAt, 8 * n, 0, m, n);
  }
  w.set(buf.subarray(wAt, wAt + n));
  return correction;
}

describe('subtractThenDots: the same bits as subtractRows then dots', () => {
  // Counts that take the dot products' groups of eight, four and one in every combination;
  // lengths odd and even, shorter than a chunk, on a chunk edge, either side of it and past
  // several chunks.
  const counts = [1, 2, 3, 4, 5, 6, 7, 8, 9, 11, 12, 13, 15];
  const chunks = [2, 4, 6, 64];
  const cases: [number, number, number][] = [];
  for (const count of counts) {
    for (const chunk of chunks) {
      for (const len of new Set([1, 2, 3, chunk - 1, chunk, chunk + 1, chunk + 2, 3 * chunk - 1, 3 * chunk, 3 * chunk + 1, 5 * chunk + 3])) {
        if (len >= 1) cases.push([count, len, chunk]);
      }
    }
  }

  it(`covers ${counts.length} counts × ${chunks.length} chunks × the lengths around their edges`, () => {
    // per count: lengths 1–7 and 13 for chunk 2 (8), ten for chunk 4 (3 = chunk − 1), eleven for 6 and 64
    expect(cases).toHaveLength(counts.length * 40);
    let differing = 0;
    for (const [count, len, chunk] of cases) {
      const d = compareKernels(count, len, chunk, 1000 * count + len + chunk);
      if (d.w.length + d.sums.length > 0) differing++;
      expect({ count, len, chunk, ...d }).toEqual({ count, len, chunk, w: [], sums: [] });
    }
    expect(differing).toBe(0);
  });

  it('an odd chunk length is taken as the even one below it (chunks start on even entries), 0 or 1 as 2', () => {
    const edges: [number, number][] = [[3, 2], [7, 6], [1, 2], [0, 2], [-5, 2]];
    expect(edges).toHaveLength(5);
    for (const [chunk] of edges) expect(compareKernels(5, 41, chunk, 7)).toEqual({ w: [], sums: [] });
  });

  it('a long vector with a basis of 90: the sizes of the MLP c run, scaled down', () => {
    expect(compareKernels(90, 20_001, chunkEntries(90), 11)).toEqual({ w: [], sums: [] });
  });
});

describe('KrylovBasis.orthogonalize with the fused sweep', () => {
  const sizes: [number, number][] = [];
  for (const m of [1, 3, 4, 5, 9, 37]) {
    const c = chunkEntries(m);
    for (const n of [1, 2, 65, 1001, c - 1, c, c + 1, 2 * c + 1]) sizes.push([n, m]);
  }

  it(`returns the two-kernel path's w and correction bit for bit (${sizes.length} sizes)`, () => {
    expect(sizes).toHaveLength(48);
    for (const [n, m] of sizes) {
      const rng = Rng.fromSeed(n * 31 + m);
      const basis = Array.from({ length: m }, () => rng.fillNormal(new Float64Array(n)));
      const store = new KrylovBasis(n, m);
      for (const q of basis) store.push(q);
      expect(store.vectors).toHaveLength(m);
      // the store really runs the kernels (its vectors live in WebAssembly memory)
      // the store runs the kernels: its vectors are views into their memory, not plain copies
      expect(store.vectors[0].byteOffset).toBeGreaterThan(0);
      const w = rng.fillNormal(new Float64Array(n));
      const fused = Float64Array.from(w);
      const reference = Float64Array.from(w);
      for (const index of [m - 1, -1]) {
        const a = store.orthogonalize(fused, index);
        const b = twoKernelOrthogonalize(basis, reference, index);
        expect({ n, m, index, correction: a, w: differingBits(fused, reference) }).toEqual({ n, m, index, correction: b, w: [] });
        expect(Object.is(a, b)).toBe(true);
      }
    }
  });
});
