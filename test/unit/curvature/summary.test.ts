import { denseHessian } from '../../../src/core/probe/curvature/dense';
import { CANCELLED, CURVATURE_CAVEAT, measureCurvature } from '../../../src/core/probe/curvature/summary';
import { Rosenbrock } from '../../../src/core/model/analytic';
import { Network } from '../../../src/core/model/network';
import { hutchinsonTrace } from '../../../src/core/linalg/density';
import { curvatureOperator } from '../../../src/core/probe/curvature/operator';
import type { Objective } from '../../../src/core/objective';
import { Rng } from '../../../src/core/rng';
import { quadraticWithSpectrum, recipe } from './helpers';

// An indefinite quadratic with a chosen spectrum (two exact zeros, two negatives).
const SPECTRUM = [30, 8, 2, 0.5, 0, 0, -1, -4, 1.5, 3];
const sorted = [...SPECTRUM].sort((x, y) => x - y);
const TRACE = SPECTRUM.reduce((s, x) => s + x, 0);
const { a, objective, n } = quadraticWithSpectrum(SPECTRUM, 5);
const w = Float64Array.from({ length: n }, (_, i) => Math.cos(i));

describe('denseHessian', () => {
  it('reproduces the matrix of a quadratic and reports its asymmetry', () => {
    // source: for f = ½wᵀAw the Hessian is A (closed form).
    const h = denseHessian(objective, w);
    expect(h.n).toBe(n);
    expect(h.products).toBe(n);
    for (let i = 0; i < n * n; i++) expect(h.matrix[i]).toBeCloseTo(a[i], 14);
    expect(h.asymmetry).toBeLessThan(1e-15);
  });

  it('measures the asymmetry of a non-symmetric product as ‖M − Mᵀ‖/‖M‖', () => {
    // A deliberately non-symmetric operator M = [[1, 2], [0, 1]]: ‖M − Mᵀ‖_F = 2√2, ‖M‖_F = √6.
    const product = (_w: Float64Array, v: Float64Array, out: Float64Array): void => {
      out[0] = v[0] + 2 * v[1];
      out[1] = v[1];
    };
    const broken: Objective = { parameterCount: 2, blocks: [], rowCount: 0, value: () => 0, gradient: () => 0, hvp: product, gnvp: product };
    const h = denseHessian(broken, new Float64Array(2));
    expect(h.asymmetry).toBeCloseTo((2 * Math.SQRT2) / Math.sqrt(6), 14);
    expect(Array.from(h.matrix)).toEqual([1, 1, 1, 1]);
  });

  it('matches the Rosenbrock Hessian at the minimum (eigenvalues 501 ± √250601)', () => {
    // source: Rosenbrock 1960; Nocedal & Wright 2006 §2 (CHECKS.md): H(1,1) = [[802, −400], [−400, 200]].
    const rep = measureCurvature(new Rosenbrock(2), Float64Array.from([1, 1]), recipe(), Rng.fromSeed(1));
    expect(rep.summary.lambdaMax).toBeCloseTo(501 + Math.sqrt(250601), 9);
    expect(rep.summary.lambdaMin as number).toBeCloseTo(501 - Math.sqrt(250601), 9);
    expect(rep.summary.conditionNumber as number).toBeCloseTo((501 + Math.sqrt(250601)) / (501 - Math.sqrt(250601)), 4);
  });

  it('refuses P above the limit with an exact message and stops when cancelled', () => {
    expect(() => denseHessian(objective, w, undefined, 'hessian', { limit: 5 })).toThrow(
      'the dense hessian needs P <= 5 parameters, this objective has 10; raise the limit or use the Lanczos path'
    );
    const h = denseHessian(objective, w, undefined, 'hessian', { onProgress: (p) => p.done < 3 });
    expect(h.stop).toBe('cancelled');
    expect(h.products).toBe(3);
  });
});

describe('curvatureSummary on a quadratic with a chosen indefinite spectrum', () => {
  // source: closed form — the Hessian of ½wᵀAw is A = Q·diag(SPECTRUM)·Qᵀ with Q orthogonal.
  it('dense path: λmax, λmin, condition of the positive part, negative share, trace', () => {
    const rep = measureCurvature(objective, w, recipe({ lr: 0.05 }), Rng.fromSeed(1));
    const s = rep.summary;
    expect(s.method).toBe('dense');
    expect(s.lambdaMax).toBeCloseTo(30, 12);
    expect(s.lambdaMin as number).toBeCloseTo(-4, 12);
    expect(s.conditionNumber as number).toBeCloseTo(30 / 0.5, 9); // zeros fall below the 1e-6 cutoff
    expect(s.cutoff).toBe(1e-6);
    expect(s.negativeShare).toBeCloseTo(2 / 10, 15);
    expect(s.trace as number).toBeCloseTo(TRACE, 12);
    expect(s.traceStandardError).toBe(0);
    expect(s.stability.largestStableLr as number).toBeCloseTo(2 / 30, 12);
    expect(s.stability.margin as number).toBeCloseTo((0.05 * 30) / 2, 12);
    expect(rep.spectrum.top).toHaveLength(5);
    rep.spectrum.top.forEach((x, i) => expect(x).toBeCloseTo(sorted[n - 1 - i], 12));
    expect(s.caveat).toBe(CURVATURE_CAVEAT);
  });

  it('Lanczos path: the same ends with bounds, Hutchinson trace within 3 s.e., SLQ negative share, no condition number', () => {
    const rep = measureCurvature(objective, w, recipe({ lr: 0.05 }), Rng.fromSeed(4), { method: 'lanczos', k: 3, traceProbes: 64, density: { probes: 16, steps: 10 } });
    const s = rep.summary;
    expect(s.method).toBe('lanczos');
    expect(Math.abs(s.lambdaMax - 30)).toBeLessThanOrEqual(s.lambdaMaxBound + 1e-12);
    expect(Math.abs(s.lambdaMax - 30)).toBeLessThan(1e-9);
    expect(Math.abs((s.lambdaMin as number) + 4)).toBeLessThan(1e-9);
    expect(s.conditionNumber).toBeNull();
    expect(s.conditionNote).toBe('not available matrix-free: the smallest positive eigenvalue lies inside an indefinite or singular spectrum; use the dense path');
    // source: Hutchinson 1989 — unbiased with the reported standard error.
    expect(Math.abs((s.trace as number) - TRACE)).toBeLessThan(3 * (s.traceStandardError as number));
    // n = 10 steps exhaust the space, so each probe's quadrature is exact: Σ τ over negative nodes = Σ (vᵀu_i)² over λ_i < 0.
    expect(s.negativeShareMethod).toBe('slq');
    expect(Math.abs((s.negativeShare as number) - 0.2)).toBeLessThan(0.15);
    expect(rep.spectrum.products).toBeGreaterThan(0);
  });

  it('positive definite spectrum: the Lanczos path gives the condition number from both ends', () => {
    const pd = quadraticWithSpectrum([9, 4, 1, 0.5, 2, 3], 9);
    const rep = measureCurvature(pd.objective, new Float64Array(6), recipe(), Rng.fromSeed(3), { method: 'lanczos', density: false, traceProbes: 0 });
    expect(rep.summary.conditionNumber as number).toBeCloseTo(18, 8);
    expect(rep.summary.trace).toBeNull();
    expect(rep.summary.negativeShare).toBeNull();
  });

  it('cancellation: partial Lanczos results are returned, an empty or dense run throws CANCELLED', () => {
    const partial = measureCurvature(objective, w, recipe(), Rng.fromSeed(1), { method: 'lanczos', onProgress: (p) => !(p.phase === 'lanczos' && p.done >= 3) });
    expect(partial.spectrum.stop).toBe('cancelled');
    expect(partial.spectrum.density).toBeNull();
    expect(partial.summary.trace).toBeNull();
    expect(() => measureCurvature(objective, w, recipe(), Rng.fromSeed(1), { method: 'lanczos', shouldStop: () => true })).toThrow(CANCELLED);
    expect(() => measureCurvature(objective, w, recipe(), Rng.fromSeed(1), { onProgress: (p) => p.done < 2 })).toThrow(CANCELLED);
  });

  it('Gauss-Newton kind is passed through to the products', () => {
    const rep = measureCurvature(objective, w, recipe(), Rng.fromSeed(1), { kind: 'gauss-newton' });
    expect(rep.summary.kind).toBe('gauss-newton');
    expect(rep.summary.lambdaMax).toBeCloseTo(30, 12); // the analytic quadratic's gnvp is its Hessian product
  });
});

describe('the trace on the matrix-free path', () => {
  /** An invented 6-16-12-4 network on 50 rows with the given hidden activation (P = 376). */
  function net(act: 'relu' | 'tanh'): { network: Network; w: Float64Array } {
    const rng = Rng.fromSeed(31);
    const rows = 50;
    const x = rng.fillNormal(new Float64Array(rows * 6));
    const y = Float64Array.from({ length: rows }, () => rng.int(4));
    const model = { kind: 'network' as const, inputs: 6, layers: [{ units: 16, activation: act }, { units: 12, activation: act }, { units: 4, activation: 'linear' as const }], init: 'lecun-normal' as const, gain: 1 };
    const network = new Network(model, { rows, inputs: 6, targets: 1, x, y }, 'cross-entropy', 0.01);
    return { network, w: rng.fillNormal(new Float64Array(network.parameterCount)) };
  }
  const options = { method: 'lanczos' as const, k: 3, density: { probes: 2, steps: 10 }, traceProbes: 16 };

  it('is exact for a piecewise-linear network: no products, no standard error, the objective’s own exact trace', () => {
    const { network, w } = net('relu');
    const rep = measureCurvature(network, w, recipe(), Rng.fromSeed(2), options);
    expect(rep.summary.traceMethod).toBe('exact');
    expect(rep.summary.traceStandardError).toBe(0);
    expect(rep.summary.trace).toBe(network.exactTrace(w, 'hessian'));
    const noTrace = measureCurvature(network, w, recipe(), Rng.fromSeed(2), { ...options, traceProbes: 0 });
    expect(noTrace.summary.trace).toBeNull();
    expect(rep.spectrum.products).toBe(noTrace.spectrum.products);
    // source: Hutchinson 1989 — the estimator is unbiased; 400 Rademacher probes of the same
    // operator land within 3 standard errors of the exact value.
    const est = hutchinsonTrace(curvatureOperator(network, w, { kind: 'hessian' }).apply, network.parameterCount, Rng.fromSeed(8), { probes: 400 });
    expect(Math.abs(est.estimate - (rep.summary.trace as number))).toBeLessThan(3 * est.standardError);
  });

  it('is estimated where the exact trace would cost more than the probes (two backward passes per output, six to a product)', () => {
    const { network, w } = net('relu'); // 4 outputs: 8 backward passes
    const one = measureCurvature(network, w, recipe(), Rng.fromSeed(2), { ...options, traceProbes: 1 });
    const two = measureCurvature(network, w, recipe(), Rng.fromSeed(2), { ...options, traceProbes: 2 });
    expect(one.summary.traceMethod).toBe('hutchinson');
    expect(two.summary.traceMethod).toBe('exact');
    expect(network.exactTrace(w, 'hessian', undefined, 7)).toBeNull();
    expect(network.exactTrace(w, 'hessian', undefined, 8)).toBe(two.summary.trace);
  });

  it('is Hutchinson’s estimate for a curved network, with its products and standard error', () => {
    const { network, w } = net('tanh');
    const rep = measureCurvature(network, w, recipe(), Rng.fromSeed(2), options);
    const noTrace = measureCurvature(network, w, recipe(), Rng.fromSeed(2), { ...options, traceProbes: 0 });
    expect(rep.summary.traceMethod).toBe('hutchinson');
    expect(rep.summary.traceStandardError as number).toBeGreaterThan(0);
    expect(rep.spectrum.products).toBe(noTrace.spectrum.products + 16);
    // The Gauss-Newton trace of the same curved network is exact.
    const gn = measureCurvature(network, w, recipe(), Rng.fromSeed(2), { ...options, kind: 'gauss-newton' });
    expect(gn.summary.traceMethod).toBe('exact');
    expect(gn.summary.trace).toBe(network.exactTrace(w, 'gauss-newton'));
  });
});

describe('the density on the matrix-free path', () => {
  it('takes the main Lanczos run as its last probe: the others are drawn, that one costs no products', () => {
    const steps = 4;
    const rep = measureCurvature(objective, w, recipe(), Rng.fromSeed(6), { method: 'lanczos', k: 2, density: { probes: 3, steps }, traceProbes: 0 });
    const d = rep.spectrum.density as NonNullable<typeof rep.spectrum.density>;
    const lanczos = measureCurvature(objective, w, recipe(), Rng.fromSeed(6), { method: 'lanczos', k: 2, density: false, traceProbes: 0 });
    expect(d.probes).toBe(3);
    expect(d.nodes.slice(0, 2).map((x) => x.length)).toEqual([steps, steps]);
    expect(d.nodes[2][d.nodes[2].length - 1]).toBe(rep.summary.lambdaMax);
    expect(rep.spectrum.products).toBe(lanczos.spectrum.products + 2 * steps);
    const alone = measureCurvature(objective, w, recipe(), Rng.fromSeed(6), { method: 'lanczos', k: 2, density: { probes: 1 }, traceProbes: 0 });
    expect(alone.spectrum.density?.probes).toBe(1);
    expect(alone.spectrum.products).toBe(lanczos.spectrum.products);
    // source: the spectrum is chosen (SPECTRUM above); the main run exhausts this 10-dimensional
    // space, so its nodes are the distinct eigenvalues (the double 0 seen once, plus a copy).
    for (const node of alone.spectrum.density?.nodes[0] ?? []) expect(Math.min(...SPECTRUM.map((x) => Math.abs(x - node)))).toBeLessThan(1e-12 * 30);
    expect(() => measureCurvature(objective, w, recipe(), Rng.fromSeed(6), { method: 'lanczos', density: { probes: 0 } })).toThrow('probes must be a positive integer, got 0');
  });
});
