/**
 * The Lanczos basis store: its blocked re-orthogonalization (WebAssembly SIMD) against the plain
 * one-vector-at-a-time loops, its one-pass projection for partial re-orthogonalization, and its
 * growth past the expected size (views re-made, values kept).
 */
import { KrylovBasis } from '../../../src/core/linalg/krylov-basis';
import { Rng } from '../../../src/core/rng';

function orthonormalSet(n: number, m: number, seed: number): Float64Array[] {
  const rng = Rng.fromSeed(seed);
  const plain = new KrylovBasis(n, m, false);
  for (let k = 0; k < m; k++) {
    const v = rng.fillNormal(new Float64Array(n));
    plain.orthogonalize(v, -1);
    let s = 0;
    for (const x of v) s += x * x;
    const r = Math.sqrt(s);
    for (let i = 0; i < n; i++) v[i] /= r;
    plain.push(v);
  }
  return plain.vectors.map((q) => Float64Array.from(q));
}

describe('KrylovBasis', () => {
  it.each([[1, 1], [7, 3], [101, 9], [1000, 37]])('n = %i, %i vectors: SIMD and plain agree to rounding and leave w orthogonal', (n, m) => {
    const qs = orthonormalSet(n, m, n + m);
    const simd = new KrylovBasis(n, m);
    const plain = new KrylovBasis(n, m, false);
    for (const q of qs) {
      simd.push(q);
      plain.push(q);
    }
    expect(simd.vectors).toHaveLength(m);
    const w = Rng.fromSeed(3).fillNormal(new Float64Array(n));
    const a = Float64Array.from(w);
    const b = Float64Array.from(w);
    const ca = simd.orthogonalize(a, m - 1);
    const cb = plain.orthogonalize(b, m - 1);
    // common practice: sums of n products reordered differ by a few ulps times n·max|term|.
    expect(Math.abs(ca - cb)).toBeLessThan(1e-13 * n);
    for (let i = 0; i < n; i++) expect(Math.abs(a[i] - b[i])).toBeLessThan(1e-13 * n);
    // source: Giraud, Langou & Rozložník 2005 — two passes of classical Gram–Schmidt leave
    // |qᵀw| at the level of round-off (here n·ε·‖w‖ with room).
    for (const q of qs) {
      let s = 0;
      for (let i = 0; i < n; i++) s += q[i] * a[i];
      expect(Math.abs(s)).toBeLessThan(1e-12 * Math.sqrt(n) * n);
    }
  });

  it('grows past the size it expected: earlier vectors keep their values', () => {
    const n = 300;
    const qs = orthonormalSet(n, 40, 5);
    const store = new KrylovBasis(n, 4);
    for (const q of qs) store.push(q);
    expect(store.vectors).toHaveLength(40);
    store.vectors.forEach((v, k) => expect(Array.from(v)).toEqual(Array.from(qs[k])));
    const w = Rng.fromSeed(8).fillNormal(new Float64Array(n));
    store.orthogonalize(w, -1);
    for (const q of qs) {
      let s = 0;
      for (let i = 0; i < n; i++) s += q[i] * w[i];
      // source: as above (CGS2 leaves round-off-level inner products).
      expect(Math.abs(s)).toBeLessThan(1e-11);
    }
  });

  it.each([true, false])('projectOut (SIMD %s): measures every overlap, subtracts only the runs above the threshold, merges runs closer than the gap', (simd) => {
    const n = 1000;
    const m = 24;
    const qs = orthonormalSet(n, m, 17);
    const store = new KrylovBasis(n, m, simd);
    for (const q of qs) store.push(q);
    // w = r + Σ c_k q_k with r orthogonal to the basis and chosen overlaps c_k: above the threshold
    // at 2, 5 and 19 (5 − 2 < gap: one run 2..5; 19 alone), below it (3e-13) elsewhere.
    const r = Rng.fromSeed(21).fillNormal(new Float64Array(n));
    const plain = new KrylovBasis(n, m, false);
    for (const q of qs) plain.push(q);
    plain.orthogonalize(r, -1);
    let rr = 0;
    for (const x of r) rr += x * x;
    for (let i = 0; i < n; i++) r[i] /= Math.sqrt(rr);
    const c = new Float64Array(m).fill(3e-13);
    c[2] = 3e-9;
    c[5] = -2e-9;
    c[19] = 5e-10;
    c[4] = 1e-13; // inside the merged run, below the threshold: subtracted with it
    const w = Float64Array.from(r);
    for (let k = 0; k < m; k++) for (let i = 0; i < n; i++) w[i] += c[k] * qs[k][i];
    const before = Float64Array.from(w);
    const { h, runs } = store.projectOut(w, 1e-12, 8);
    expect(runs).toEqual([[2, 6], [19, 20]]);
    // source: the construction (qᵀw = c_k for an orthonormal basis), to the rounding of n-term sums.
    for (let k = 0; k < m; k++) expect(Math.abs(h[k] - c[k])).toBeLessThan(1e-14);
    const overlap = (k: number): number => {
      let s = 0;
      for (let i = 0; i < n; i++) s += qs[k][i] * w[i];
      return s;
    };
    // source: one classical Gram–Schmidt pass over an orthonormal basis removes the measured
    // components to rounding (common practice); the other components are left as they were.
    for (const k of [2, 3, 4, 5, 19]) expect(Math.abs(overlap(k))).toBeLessThan(1e-14);
    for (const k of [0, 1, 6, 18, 20, 23]) expect(Math.abs(overlap(k) - c[k])).toBeLessThan(1e-14);
    // source: the construction — the subtracted components are 3e-9, 2e-9 and 5e-10 along unit vectors.
    let moved = 0;
    for (let i = 0; i < n; i++) moved = Math.max(moved, Math.abs(w[i] - before[i]));
    expect(moved).toBeLessThan(1e-8);
    expect(moved).toBeGreaterThan(1e-10);
  });

  it('projectOut with nothing above the threshold leaves w bit for bit as it was', () => {
    const n = 300;
    const qs = orthonormalSet(n, 6, 2);
    const store = new KrylovBasis(n, 6);
    for (const q of qs) store.push(q);
    const w = Rng.fromSeed(4).fillNormal(new Float64Array(n));
    store.orthogonalize(w, -1);
    const before = Float64Array.from(w);
    const { runs } = store.projectOut(w, 1e-9, 8);
    expect(runs).toEqual([]);
    expect(Array.from(w)).toEqual(Array.from(before));
  });
});
