/**
 * The Lanczos basis store: its blocked re-orthogonalization (WebAssembly SIMD) against the plain
 * one-vector-at-a-time loops, and its growth past the expected size (views re-made, values kept).
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
});
