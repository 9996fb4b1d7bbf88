import { rootFreeEigenvalues } from '../../../src/core/linalg/root-free-ql';
import { tridiagonalQL } from '../../../src/core/linalg/tridiagonal';
import { Rng } from '../../../src/core/rng';

/** T with diagonal `d` and couplings `e` (e[i] joins i − 1 and i; e[0] unused). */
const tri = (d: number[] | Float64Array, e: number[] | Float64Array): { diagonal: Float64Array; subdiagonal: Float64Array } => ({
  diagonal: Float64Array.from(d),
  subdiagonal: Float64Array.from(e),
});

/** ‖T‖∞: the largest absolute row sum. */
function normInf(d: Float64Array, e: Float64Array): number {
  let m = 0;
  for (let i = 0; i < d.length; i++) m = Math.max(m, Math.abs(d[i]) + Math.abs(e[i]) + (i + 1 < d.length ? Math.abs(e[i + 1]) : 0));
  return m;
}

describe('root-free QL (eigenvalues of a symmetric tridiagonal matrix)', () => {
  it('gives the closed-form spectrum of the tridiagonal Toeplitz matrix [b a b]', () => {
    // source: Golub & Van Loan 4th ed., §4.8.3 — eigenvalues a + 2b·cos(kπ/(n + 1)), k = 1..n.
    const n = 50;
    const a = 2.5;
    const b = -1.25;
    const values = rootFreeEigenvalues(tri(new Array(n).fill(a), [0, ...new Array(n - 1).fill(b)]));
    expect(values).not.toBeNull();
    const expected = Array.from({ length: n }, (_, k) => a + 2 * b * Math.cos(((k + 1) * Math.PI) / (n + 1))).sort((x, y) => x - y);
    expect(values?.length).toBe(n);
    // source: Golub & Van Loan 4th ed., §8.3.4 — symmetric QL/QR eigenvalues are exact for T + E with ‖E‖ ≈ u‖T‖; 10 u‖T‖ allowed.
    for (let k = 0; k < n; k++) expect(Math.abs((values as Float64Array)[k] - expected[k])).toBeLessThan(10 * 2 ** -53 * (Math.abs(a) + 2 * Math.abs(b)));
  });

  it('agrees with the rotation QL on random, split, constant-diagonal and graded matrices', () => {
    const rng = Rng.fromSeed(4);
    let cases = 0;
    for (const n of [1, 2, 3, 4, 5, 10, 50, 200]) {
      for (let k = 0; k < 8; k++) {
        const d = rng.fillNormal(new Float64Array(n));
        const e = rng.fillNormal(new Float64Array(n));
        e[0] = 0;
        if (k % 4 === 1) for (let i = 1; i < n; i += 3) e[i] = 0;
        if (k % 4 === 2) d.fill(1);
        if (k % 4 === 3) for (let i = 0; i < n; i++) { d[i] *= 10 ** ((i % 12) - 6); e[i] *= 10 ** ((i % 12) - 6); }
        const t = tri(d, e);
        const got = rootFreeEigenvalues(t);
        const want = tridiagonalQL(t);
        expect(got).not.toBeNull();
        expect(got?.length).toBe(n);
        // source: Golub & Van Loan 4th ed., §8.3.4 — both are backward stable (error ≈ u‖T‖ each); 10·n·u‖T‖ allowed between them.
        const tol = 10 * n * 2 ** -53 * normInf(d, e);
        for (let i = 0; i < n; i++) expect(Math.abs((got as Float64Array)[i] - want[i])).toBeLessThanOrEqual(tol);
        cases++;
      }
    }
    expect(cases).toBe(64);
  });

  it('returns the eigenvalues ascending, handles n = 0 and 2×2 blocks', () => {
    expect(rootFreeEigenvalues(tri([], []))?.length).toBe(0);
    // from memory: eigenvalues of [[2, 1], [1, 3]] are (5 ± √5)/2.
    const v = rootFreeEigenvalues(tri([2, 3], [0, 1])) as Float64Array;
    expect(v[0]).toBeCloseTo((5 - Math.sqrt(5)) / 2, 14);
    expect(v[1]).toBeCloseTo((5 + Math.sqrt(5)) / 2, 14);
  });

  it('declines matrices whose squares could overflow or vanish (the caller then rotates)', () => {
    expect(rootFreeEigenvalues(tri([1e200, 1, 2], [0, 1, 1]))).toBeNull();
    expect(rootFreeEigenvalues(tri([1, 1, 2], [0, 1e-200, 1]))).toBeNull();
    expect(rootFreeEigenvalues(tri([NaN, 1], [0, 1]))).toBeNull();
  });
});
