import { densityMassBelow, densityOfRules, hutchinsonTrace, spectralDensity, withProbes } from '../../../src/core/linalg/density';
import { lanczosExtremes } from '../../../src/core/linalg/lanczos';
import { eigenvalues } from '../../../src/core/linalg/symmetric-eigen';
import { Rng } from '../../../src/core/rng';
import { graded, matvec, spiked } from '../../reference/curvature/fixtures';

function trace(a: Float64Array, n: number): number {
  let t = 0;
  for (let i = 0; i < n; i++) t += a[i * n + i];
  return t;
}

/** Σ_{i≠j} A_ij² and tr(A²) of a dense symmetric n×n matrix. */
function squares(a: Float64Array, n: number): { offDiagonal: number; traceOfSquare: number } {
  let off = 0;
  let all = 0;
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) {
      const x = a[i * n + j] * a[i * n + j];
      all += x;
      if (i !== j) off += x;
    }
  }
  return { offDiagonal: off, traceOfSquare: all };
}

/**
 * Standard deviation of one probe vᵀAv, v uniform on the unit sphere: the squared coordinates
 * are Dirichlet(½, …, ½), so Var = 2/(n+2)·(tr(A²)/n − (tr A/n)²).
 * source: moments of the Dirichlet distribution (e.g. Kotz, Balakrishnan & Johnson,
 * *Continuous Multivariate Distributions* vol. 1, 2nd ed., 2000, ch. 49); from memory.
 */
function sphereProbeSd(a: Float64Array, n: number): number {
  const m = trace(a, n) / n;
  return Math.sqrt((2 / (n + 2)) * (squares(a, n).traceOfSquare / n - m * m));
}

function trapezoid(x: Float64Array, y: Float64Array): number {
  let s = 0;
  for (let i = 1; i < x.length; i++) s += 0.5 * (x[i] - x[i - 1]) * (y[i] + y[i - 1]);
  return s;
}

describe('spectralDensity (stochastic Lanczos quadrature)', () => {
  const n = 300;
  const a = spiked(n, 21);
  const d = spectralDensity(matvec(a, n), n, Rng.fromSeed(42), { probes: 10, steps: 60 });

  it('integrates to 1 on its grid and each probe’s weights sum to 1', () => {
    // source: Gauss quadrature weights of a unit start vector sum to ‖v‖² = 1 (Golub & Meurant 2010, ch. 6).
    for (const w of d.weights) expect(w.reduce((s, x) => s + x, 0)).toBeCloseTo(1, 12);
    expect(trapezoid(d.grid, d.density)).toBeCloseTo(1, 6);
  });

  it('has a mean within 4 closed-form standard errors of tr(A)/n (seed 42, 10 probes)', () => {
    // source: E[vᵀAv] = tr(A)/n for v uniform on the unit sphere (Ubaru, Chen & Saad 2017, §2);
    // the spread of one probe is the closed form of sphereProbeSd, not the estimator's own error.
    const exact = trace(a, n) / n;
    const sd = sphereProbeSd(a, n) / Math.sqrt(d.probes);
    expect(d.probes).toBe(10);
    expect(Math.abs(d.mean - exact)).toBeLessThan(4 * sd);
    // The grid density's first moment equals the nodes' mean (the kernel is symmetric).
    let m1 = 0;
    const t = Float64Array.from(d.grid, (x, i) => x * d.density[i]);
    m1 = trapezoid(d.grid, t);
    expect(m1).toBeCloseTo(d.mean, 5);
  });

  it('covers the extreme eigenvalues with its nodes (Gauss nodes converge to the ends first)', () => {
    // source: Golub & Van Loan 4th ed., §10.1.5 (extreme Ritz values converge first).
    const all = eigenvalues(a, n);
    const maxNode = Math.max(...d.nodes.map((th) => th[th.length - 1]));
    const minNode = Math.min(...d.nodes.map((th) => th[0]));
    expect(Math.abs(maxNode - all[n - 1])).toBeLessThan(1e-8 * Math.abs(all[n - 1]));
    expect(Math.abs(minNode - all[0])).toBeLessThan(1e-8 * Math.abs(all[0]));
  });

  it('estimates the negative share near the exact fraction of negative eigenvalues', () => {
    // common practice (no single source): SLQ's node weights estimate the spectral CDF to about 1/√(probes·n) noise
    const all = eigenvalues(a, n);
    const exact = all.filter((x) => x < -1e-6 * Math.abs(all[n - 1])).length / n;
    expect(Math.abs(d.negativeShare - exact)).toBeLessThan(0.1);
    expect(Math.abs(densityMassBelow(d, 0) - exact)).toBeLessThan(0.1);
    expect(densityMassBelow(d, d.grid[d.grid.length - 1])).toBeCloseTo(1, 6);
  });

  it('reports a standard error that matches the closed form over seeded repeat runs', () => {
    // source: sphereProbeSd (Dirichlet moments). 40 seeded runs of 10 probes each: the spread of
    // their means estimates the true standard error to about ±25 % (χ² with 39 degrees of freedom).
    const runs = Array.from({ length: 40 }, (_, k) => spectralDensity(matvec(a, n), n, Rng.fromSeed(1000 + k), { probes: 10, steps: 2 }));
    expect(runs).toHaveLength(40);
    const means = runs.map((r) => r.mean);
    const avg = means.reduce((s, x) => s + x, 0) / means.length;
    const spread = Math.sqrt(means.reduce((s, x) => s + (x - avg) * (x - avg), 0) / (means.length - 1));
    const closed = sphereProbeSd(a, n) / Math.sqrt(10);
    expect(spread / closed).toBeGreaterThan(0.7);
    expect(spread / closed).toBeLessThan(1.3);
    const reported = runs.reduce((s, r) => s + r.meanStandardError, 0) / runs.length;
    expect(reported / closed).toBeGreaterThan(0.8);
    expect(reported / closed).toBeLessThan(1.2);
  });

  it('stops after the probe whose progress callback returns false', () => {
    const r = spectralDensity(matvec(a, n), n, Rng.fromSeed(1), { probes: 5, steps: 20, onProgress: (p) => p.done < 2 });
    expect(r.probes).toBe(2);
    expect(r.stop).toBe('cancelled');
    expect(r.products).toBe(40);
  });
});

describe('a Lanczos run for the extreme eigenvalues as one more SLQ probe', () => {
  const n = 300;
  const a = spiked(n, 21);
  const drawn = spectralDensity(matvec(a, n), n, Rng.fromSeed(42), { probes: 9, steps: 60 });
  const run = lanczosExtremes(matvec(a, n), n, Rng.fromSeed(43), { k: 3, which: 'both', rule: true });
  const rule = run.rule as NonNullable<typeof run.rule>;

  it('has the run’s Ritz values as nodes and weights that sum to 1', () => {
    expect(rule.nodes).toHaveLength(run.iterations);
    // source: Gauss quadrature weights of a unit start vector sum to ‖v‖² = 1 (Golub & Meurant 2010, ch. 6).
    expect(rule.weights.reduce((s, x) => s + x, 0)).toBeCloseTo(1, 12);
    expect(rule.nodes[rule.nodes.length - 1]).toBe(run.largest[0].value);
    expect(rule.nodes[0]).toBe(run.smallest[0].value);
    // source: E[vᵀAv] = tr(A)/n for v uniform on the unit sphere, and the rule's first moment is vᵀAv
    // (Ubaru, Chen & Saad 2017, §2): one probe lands within 4 closed-form standard deviations.
    expect(Math.abs(rule.nodes.reduce((s, x, j) => s + x * rule.weights[j], 0) - trace(a, n) / n)).toBeLessThan(4 * sphereProbeSd(a, n));
  });

  it('appended to drawn probes: the same as broadening all the rules at once; its products are not counted again', () => {
    const d = withProbes(drawn, [rule], { probes: 10, steps: 60 });
    expect(d.probes).toBe(10);
    expect(d.products).toBe(drawn.products);
    expect(d.nodes[9]).toBe(rule.nodes);
    const all = densityOfRules([...drawn.nodes.map((nodes, l) => ({ nodes, weights: drawn.weights[l] })), rule], {}, drawn.products);
    expect(Array.from(d.density)).toEqual(Array.from(all.density));
    expect(trapezoid(d.grid, d.density)).toBeCloseTo(1, 6);
    // source: E[vᵀAv] = tr(A)/n for v uniform on the unit sphere (Ubaru, Chen & Saad 2017, §2): the
    // run's start vector is such a v, so the ten probes' mean stays within 4 closed-form errors.
    expect(Math.abs(d.mean - trace(a, n) / n)).toBeLessThan((4 * sphereProbeSd(a, n)) / Math.sqrt(10));
    expect(() => densityOfRules([])).toThrow('a spectral density needs at least one probe');
  });
});

describe('hutchinsonTrace', () => {
  it.each([
    ['spiked n=300, seed 3', () => spiked(300, 21), 300, 3],
    ['graded n=400, seed 4', () => graded(400, 22), 400, 4],
  ] as const)('%s: within 4 closed-form standard errors of the exact trace, and reports that error', (_name, make, n, seed) => {
    // source: Hutchinson 1989 — E[zᵀAz] = tr(A) for Rademacher z, Var(zᵀAz) = 2 Σ_{i≠j} A_ij².
    const a = make();
    const t = hutchinsonTrace(matvec(a, n), n, Rng.fromSeed(seed), { probes: 64 });
    expect(t.probes).toBe(64);
    const closed = Math.sqrt((2 * squares(a, n).offDiagonal) / 64);
    expect(Math.abs(t.estimate - trace(a, n))).toBeLessThan(4 * closed);
    // The sample standard error of 64 probes is within ±35 % of the closed form (χ² with 63 degrees of freedom, heavy tails allowed).
    expect(t.standardError / closed).toBeGreaterThan(0.65);
    expect(t.standardError / closed).toBeLessThan(1.35);
  });

  it('spreads over seeded repeat runs as the closed-form variance says', () => {
    // source: Hutchinson 1989 — Var(zᵀAz) = 2 Σ_{i≠j} A_ij²; 60 runs of 8 probes pin the spread to about ±20 %.
    const n = 120;
    const a = graded(n, 23);
    const estimates = Array.from({ length: 60 }, (_, k) => hutchinsonTrace(matvec(a, n), n, Rng.fromSeed(500 + k), { probes: 8 }).estimate);
    expect(estimates).toHaveLength(60);
    const avg = estimates.reduce((s, x) => s + x, 0) / estimates.length;
    const spread = Math.sqrt(estimates.reduce((s, x) => s + (x - avg) * (x - avg), 0) / (estimates.length - 1));
    const closed = Math.sqrt((2 * squares(a, n).offDiagonal) / 8);
    expect(spread / closed).toBeGreaterThan(0.7);
    expect(spread / closed).toBeLessThan(1.3);
  });

  it('is exact for a diagonal matrix (zᵀDz = tr D for every Rademacher z)', () => {
    // source: Hutchinson 1989 — the estimator's variance is 2 Σ_{i≠j} A_ij², zero for diagonal A.
    const n = 20;
    const a = new Float64Array(n * n);
    for (let i = 0; i < n; i++) a[i * n + i] = i - 7.5;
    const t = hutchinsonTrace(matvec(a, n), n, Rng.fromSeed(9), { probes: 5 });
    expect(t.estimate).toBeCloseTo(trace(a, n), 12);
    expect(t.standardError).toBeCloseTo(0, 12);
  });
});
