import { eigenvalues, fromRows, selectedEigenpairs, symmetricEigen } from '../../../src/core/linalg/symmetric-eigen';
import { Rng } from '../../../src/core/rng';
import { tridiagonalForm, tridiagonalize } from '../../../src/core/linalg/householder';
import { tridiagonalQL } from '../../../src/core/linalg/tridiagonal';
import { eigenSpace } from '../../../src/core/linalg/eigen-kernels';
import { diagonal, repeated, repeatedSpectrum, tridiagonal, wilkinson } from '../../reference/curvature/fixtures';

/** Seeded random symmetric matrix with standard normal entries. */
function seededSymmetric(n: number, seed: number): Float64Array {
  const rng = Rng.fromSeed(seed);
  const a = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j <= i; j++) {
      const v = rng.normal();
      a[i * n + j] = v;
      a[j * n + i] = v;
    }
  }
  return a;
}

function maxAbs(a: ArrayLike<number>): number {
  let m = 0;
  for (let i = 0; i < a.length; i++) m = Math.max(m, Math.abs(a[i]));
  return m;
}

/** max_ij |(A·V − V·D)_ij| with eigenvectors as rows of `v`. */
function residual(a: Float64Array, n: number, values: Float64Array, v: Float64Array): number {
  let m = 0;
  for (let k = 0; k < values.length; k++) {
    for (let i = 0; i < n; i++) {
      let s = 0;
      for (let j = 0; j < n; j++) s += a[i * n + j] * v[k * n + j];
      m = Math.max(m, Math.abs(s - values[k] * v[k * n + i]));
    }
  }
  return m;
}

/** max |VᵀV − I| over the rows of `v`. */
function orthogonality(v: Float64Array, n: number, k: number): number {
  let m = 0;
  for (let p = 0; p < k; p++) {
    for (let q = 0; q < k; q++) {
      let s = 0;
      for (let j = 0; j < n; j++) s += v[p * n + j] * v[q * n + j];
      m = Math.max(m, Math.abs(s - (p === q ? 1 : 0)));
    }
  }
  return m;
}

const cases: [string, number, () => Float64Array][] = [
  ['random n=1', 1, () => seededSymmetric(1, 1)],
  ['random n=2', 2, () => seededSymmetric(2, 2)],
  ['random n=3', 3, () => seededSymmetric(3, 3)],
  ['random n=50', 50, () => seededSymmetric(50, 4)],
  ['random n=200', 200, () => seededSymmetric(200, 5)],
  ['repeated eigenvalues n=60', 60, () => repeated(60, 16)],
  ['already diagonal n=40 (duplicates)', 40, () => diagonal(40, 17)],
  ['already tridiagonal n=80', 80, () => tridiagonal(80, 18)],
  ['Wilkinson W21+ (close pairs)', 21, () => wilkinson(21)],
  ['zero matrix n=5', 5, () => new Float64Array(25)],
  ['identity n=7', 7, () => { const a = new Float64Array(49); for (let i = 0; i < 7; i++) a[i * 7 + i] = 1; return a; }],
];

describe('symmetricEigen invariants', () => {
  // common practice (no single source): a backward-stable symmetric eigen-solver gives
  // ‖AV − VD‖ and ‖VᵀV − I‖ of order n·ε·‖A‖; we allow 1e-12·max(1, max|λ|) for n ≤ 200.
  it.each(cases)('%s: A·V ≈ V·D, VᵀV ≈ I, values ascending', (_name, n, make) => {
    const a = make();
    const copy = Float64Array.from(a);
    const { values, vectors } = symmetricEigen(a, n, { vectors: true });
    expect(a).toEqual(copy); // input not overwritten by default
    expect(vectors).not.toBeNull();
    const scale = Math.max(1, maxAbs(values));
    expect(residual(a, n, values, vectors as Float64Array)).toBeLessThan(1e-12 * scale);
    expect(orthogonality(vectors as Float64Array, n, n)).toBeLessThan(1e-12);
    for (let k = 1; k < n; k++) expect(values[k]).toBeGreaterThanOrEqual(values[k - 1]);
    // trace is invariant under similarity
    let tr = 0;
    let sum = 0;
    for (let i = 0; i < n; i++) tr += a[i * n + i];
    for (const v of values) sum += v;
    expect(Math.abs(tr - sum)).toBeLessThan(1e-12 * scale * n);
  });

  it.each([['random n=200', 200, () => seededSymmetric(200, 5)], ['repeated n=60', 60, () => repeated(60, 16)]] as const)(
    '%s: topVectors gives the top eigenvectors (A·v ≈ λv, orthonormal) without the full accumulation',
    (_name, n, make) => {
      const a = make();
      const r = symmetricEigen(a, n, { topVectors: 6 });
      expect(r.vectorOffset).toBe(n - 6);
      const vals = r.values.slice(n - 6);
      const scale = Math.max(1, maxAbs(r.values));
      expect(residual(a, n, vals, r.vectors as Float64Array)).toBeLessThan(1e-10 * scale);
      expect(orthogonality(r.vectors as Float64Array, n, 6)).toBeLessThan(1e-10);
    }
  );

  it('values-only and with-vectors paths agree', () => {
    const a = seededSymmetric(120, 9);
    const v1 = eigenvalues(a, 120);
    const v2 = symmetricEigen(a, 120, { vectors: true }).values;
    expect(maxAbs(v1.map((x, i) => x - v2[i]))).toBeLessThan(1e-12 * maxAbs(v1));
  });

  it('values alone leave the matrix untouched; their T is, bit for bit, the T of the path that keeps the reflectors', () => {
    const n = 97;
    const a = seededSymmetric(n, 11);
    const before = Float64Array.from(a);
    const values = eigenvalues(a, n);
    expect(values.length).toBe(n);
    expect(Array.from(a)).toEqual(Array.from(before));
    // overwrite: true is a permission, not a promise; values alone still read the matrix only
    expect(Array.from(symmetricEigen(a, n, { overwrite: true }).values)).toEqual(Array.from(values));
    expect(Array.from(a)).toEqual(Array.from(before));
    const t = tridiagonalForm(a, n);
    const kept = tridiagonalize(Float64Array.from(a), n);
    expect(Array.from(t.diagonal)).toEqual(Array.from(kept.diagonal));
    expect(Array.from(t.subdiagonal)).toEqual(Array.from(kept.subdiagonal));
    expect(Array.from(t.h)).toEqual(Array.from(kept.h));
  });

  it('recovers a known spectrum with multiplicities (3 ×5, −1 ×4, 0 ×3)', () => {
    // source: the matrix is Q·D·Qᵀ with Q orthogonal by construction, so its eigenvalues are D.
    const expected = repeatedSpectrum(60, 16).sort((x, y) => x - y);
    const values = eigenvalues(repeated(60, 16), 60);
    for (let k = 0; k < 60; k++) expect(Math.abs(values[k] - expected[k])).toBeLessThan(1e-13 * 4);
  });

  it('handles n = 0 and rejects a wrong storage size with an exact message', () => {
    expect(symmetricEigen(new Float64Array(0), 0, { vectors: true }).values.length).toBe(0);
    expect(() => eigenvalues(new Float64Array(5), 2)).toThrow('a symmetric matrix of order 2 needs 4 entries, got 5');
  });

  it('reads only the lower triangle', () => {
    const a = seededSymmetric(30, 10);
    const b = Float64Array.from(a);
    for (let i = 0; i < 30; i++) for (let j = i + 1; j < 30; j++) b[i * 30 + j] = 999;
    expect(eigenvalues(b, 30)).toEqual(eigenvalues(a, 30));
  });

  it('fromRows builds row-major storage and checks squareness', () => {
    expect(Array.from(fromRows([[2, 1], [1, 3]]))).toEqual([2, 1, 1, 3]);
    expect(() => fromRows([[1, 2], [3]])).toThrow('row 1 has 1 entries, expected 2 for a square matrix');
    // from memory: eigenvalues of [[2,1],[1,3]] are (5 ± √5)/2.
    const v = eigenvalues(fromRows([[2, 1], [1, 3]]), 2);
    expect(v[0]).toBeCloseTo((5 - Math.sqrt(5)) / 2, 14);
    expect(v[1]).toBeCloseTo((5 + Math.sqrt(5)) / 2, 14);
  });
});

describe('SIMD and scalar, blocked and unblocked tridiagonalization', () => {
  it('the WebAssembly SIMD kernels are available under Node 20 (so the fast path is the tested one)', () => {
    expect(eigenSpace(4, 2).kernels.kind).toBe('simd');
    expect(eigenSpace(4, 2, false).kernels.kind).toBe('scalar');
  });

  const variants: [string, { simd: boolean; block?: number }][] = [
    ['scalar, panels of 32', { simd: false }],
    ['SIMD, unblocked', { simd: true, block: 1 }],
    ['SIMD, panels of 5', { simd: true, block: 5 }],
    ['scalar, panels of 7', { simd: false, block: 7 }],
  ];
  it.each([2, 3, 7, 33, 64, 201])('n=%d: every variant gives the spectrum of the SIMD panels of 32 to rounding', (n) => {
    expect(variants).toHaveLength(4);
    const a = seededSymmetric(n, 100 + n);
    const ref = tridiagonalQL(tridiagonalize(Float64Array.from(a), n));
    // common practice: a backward-stable reduction changes eigenvalues by O(n·ε·‖A‖); 1e-12·max|λ| leaves room.
    const scale = maxAbs(ref);
    for (const [, options] of variants) {
      const other = tridiagonalQL(tridiagonalize(Float64Array.from(a), n, options));
      for (let k = 0; k < n; k++) expect(Math.abs(other[k] - ref[k])).toBeLessThan(1e-12 * scale);
    }
  });

  it('applies the reflectors alike in both paths (eigenvectors of n = 70)', () => {
    const n = 70;
    const a = seededSymmetric(n, 9);
    const fast = symmetricEigen(a, n, { vectors: true });
    expect(residual(a, n, fast.values, fast.vectors as Float64Array)).toBeLessThan(1e-11 * maxAbs(fast.values));
    expect(orthogonality(fast.vectors as Float64Array, n, n)).toBeLessThan(1e-11);
  });
});

describe('selectedEigenpairs (Sturm bisection + inverse iteration)', () => {
  it.each(cases.filter(([, n]) => n >= 3))('%s: extreme pairs match the full solve and satisfy A·v ≈ λv', (_name, n, make) => {
    const a = make();
    const all = eigenvalues(a, n);
    const scale = Math.max(1, maxAbs(all));
    const k = Math.min(5, n);
    for (const [first, last] of [[0, k - 1], [-k, -1]]) {
      const sel = selectedEigenpairs(a, n, first, last);
      const lo = first < 0 ? n + first : first;
      for (let j = 0; j < k; j++) expect(Math.abs(sel.values[j] - all[lo + j])).toBeLessThan(1e-12 * scale);
      expect(residual(a, n, sel.values, sel.vectors as Float64Array)).toBeLessThan(1e-10 * scale);
      expect(orthogonality(sel.vectors as Float64Array, n, k)).toBeLessThan(1e-10);
    }
  });

  it('separates a five-fold eigenvalue into an orthonormal basis of its eigenspace', () => {
    const a = repeated(60, 16);
    const sel = selectedEigenpairs(a, 60, -5, -1); // the five copies of 3 (largest: 4·u < 2)
    for (const v of sel.values) expect(Math.abs(v - 3)).toBeLessThan(1e-12);
    expect(residual(a, 60, sel.values, sel.vectors as Float64Array)).toBeLessThan(1e-10);
    expect(orthogonality(sel.vectors as Float64Array, 60, 5)).toBeLessThan(1e-10);
  });

  it('rejects indices out of range with an exact message', () => {
    expect(() => selectedEigenpairs(new Float64Array(9), 3, 2, 5)).toThrow(
      'eigenpair indices must satisfy 0 <= first <= last < 3 after counting negatives from the top, got first=2, last=5'
    );
  });
});
