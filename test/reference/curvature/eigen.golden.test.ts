import { eigenvalues } from '../../../src/core/linalg/symmetric-eigen';
import { DENSE_CASES, EXTREME_CASES, golden } from './fixtures';

type DenseGolden = { n: number; eigenvalues: number[] };

describe('dense eigenvalues against numpy / torch', () => {
  it('has a golden value for every case', () => {
    expect(Object.keys(golden.dense as object).sort()).toEqual(Object.keys(DENSE_CASES).sort());
    expect(Object.keys(golden.extreme as object).sort()).toEqual(Object.keys(EXTREME_CASES).sort());
    expect(Object.keys(DENSE_CASES).length).toBeGreaterThan(2);
  });

  // source: numpy.linalg.eigvalsh (LAPACK syevd), numpy 1.24.2, via make_golden.py.
  // Tolerance: 1e-12·max|λ| absolute, the backward-error scale of a stable solver (common practice).
  it.each(Object.keys(DENSE_CASES))('%s matches numpy.linalg.eigvalsh', (name) => {
    const ref = (golden.dense as Record<string, DenseGolden>)[name];
    const got = eigenvalues(DENSE_CASES[name](), ref.n);
    const scale = Math.max(...ref.eigenvalues.map(Math.abs));
    expect(got.length).toBe(ref.n);
    expect(ref.eigenvalues).toHaveLength(ref.n);
    for (let k = 0; k < ref.n; k++) expect(Math.abs(got[k] - ref.eigenvalues[k])).toBeLessThan(1e-12 * scale);
  });

  // source: torch.linalg.eigvalsh, torch 1.13, via make_golden.py.
  it.each(Object.keys(EXTREME_CASES))('%s full spectrum matches torch.linalg.eigvalsh', (name) => {
    const ref = (golden.extreme as Record<string, DenseGolden>)[name];
    const got = eigenvalues(EXTREME_CASES[name](), ref.n);
    const scale = Math.max(...ref.eigenvalues.map(Math.abs));
    expect(got.length).toBe(ref.n);
    expect(ref.eigenvalues).toHaveLength(ref.n);
    for (let k = 0; k < ref.n; k++) expect(Math.abs(got[k] - ref.eigenvalues[k])).toBeLessThan(1e-12 * scale);
  });
});
