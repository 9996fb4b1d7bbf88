import { measureCurvature } from '../../../src/core/probe/curvature/summary';
import { preconditionerDiagonal, stabilityBound, stabilityFactor, stepMetric } from '../../../src/core/probe/curvature/stability';
import { Rng } from '../../../src/core/rng';
import { mul, norm, quadraticWithSpectrum, recipe } from './helpers';

// A positive definite quadratic with a chosen spectrum: λmax = 40.
const SPECTRUM = [40, 12, 3, 1, 0.25, 7, 0.6, 2.5];
const LMAX = 40;
const { a, objective, n } = quadraticWithSpectrum(SPECTRUM);
const w0 = Float64Array.from({ length: n }, (_, i) => 1 + 0.1 * i);

/**
 * ‖w_N‖/‖w_0‖ after N steps of an optimizer loop on f = ½wᵀAw (minimum at 0), run in chunks of
 * 100 steps and stopped once the ratio passes 1e12 (so that divergence never overflows to NaN).
 */
function growth(loop: (w: Float64Array, steps: number) => Float64Array, steps: number): number {
  let w = Float64Array.from(w0);
  let ratio = 1;
  for (let done = 0; done < steps; done += 100) {
    w = loop(w, 100);
    ratio = norm(w) / norm(w0);
    if (ratio > 1e12) break;
  }
  return ratio;
}

const gd = (lr: number) => (w: Float64Array, steps: number): Float64Array => {
  for (let t = 0; t < steps; t++) { const g = mul(a, w); for (let i = 0; i < n; i++) w[i] -= lr * g[i]; }
  return w;
};
/** PyTorch heavy ball / Nesterov: v ← μv + g; w ← w − η v (heavy) or w − η(g + μv) (Nesterov). */
const momentum = (lr: number, mu: number, nesterov: boolean) => {
  const v = new Float64Array(n); // optimizer state persists across chunks
  return (w: Float64Array, steps: number): Float64Array => {
  for (let t = 0; t < steps; t++) {
    const g = mul(a, w);
    for (let i = 0; i < n; i++) { v[i] = mu * v[i] + g[i]; w[i] -= lr * (nesterov ? g[i] + mu * v[i] : v[i]); }
  }
  return w;
  };
};
/** Adam-style EMA momentum with a frozen diagonal preconditioner P. */
const frozenAdam = (lr: number, beta1: number, p: Float64Array) => {
  const m = new Float64Array(n); // optimizer state persists across chunks
  return (w: Float64Array, steps: number): Float64Array => {
  for (let t = 0; t < steps; t++) {
    const g = mul(a, w);
    for (let i = 0; i < n; i++) { m[i] = beta1 * m[i] + (1 - beta1) * g[i]; w[i] -= (lr * m[i]) / p[i]; }
  }
  return w;
  };
};

describe('largest stable learning rate on a quadratic with a chosen spectrum', () => {
  it('plain GD: 2/λmax, margin η·λmax/2; 0.99× converges, 1.01× diverges', () => {
    // source: Nocedal & Wright 2006, ch. 3 / CHECKS.md — GD on a quadratic converges iff η < 2/λmax.
    const r = recipe({ lr: 0.03 });
    const rep = measureCurvature(objective, w0, r, Rng.fromSeed(1));
    const s = rep.summary.stability;
    expect(s.rule).toBe('gradient-descent');
    expect(s.largestStableLr as number).toBeCloseTo(2 / LMAX, 13);
    expect(s.margin as number).toBeCloseTo((0.03 * LMAX) / 2, 12);
    const lr = s.largestStableLr as number;
    expect(growth(gd(0.99 * lr), 3000)).toBeLessThan(1e-6);
    expect(growth(gd(1.01 * lr), 3000)).toBeGreaterThan(1e6);
  });

  it.each([0.5, 0.9])('heavy ball μ=%s: 2(1+μ)/λmax; 0.99× converges, 1.01× diverges', (mu) => {
    // source: Polyak 1964 (CHECKS.md) — heavy ball is stable iff 0 < ηλ < 2(1 + μ).
    const s = stabilityBound(recipe({ momentum: mu, lr: 0.01 }), LMAX);
    expect(s.rule).toBe('heavy-ball');
    expect(s.largestStableLr as number).toBeCloseTo((2 * (1 + mu)) / LMAX, 13);
    expect(s.margin as number).toBeCloseTo((0.01 * LMAX) / (2 * (1 + mu)), 12);
    const lr = s.largestStableLr as number;
    expect(growth(momentum(0.99 * lr, mu, false), 6000)).toBeLessThan(1e-3);
    expect(growth(momentum(1.01 * lr, mu, false), 6000)).toBeGreaterThan(1e3);
  });

  it.each([0.5, 0.9])('Nesterov μ=%s: 2(1+μ)/((1+2μ)λmax); 0.99× converges, 1.01× diverges', (mu) => {
    // from memory / derived in stability.ts: Schur–Cohn on z² − (1+μ)(1−c)z + μ(1−c); checked by the loop below.
    const s = stabilityBound(recipe({ momentum: mu, nesterov: true }), LMAX);
    expect(s.rule).toBe('nesterov');
    const lr = s.largestStableLr as number;
    expect(lr).toBeCloseTo((2 * (1 + mu)) / ((1 + 2 * mu) * LMAX), 13);
    expect(growth(momentum(0.99 * lr, mu, true), 6000)).toBeLessThan(1e-3);
    expect(growth(momentum(1.01 * lr, mu, true), 6000)).toBeGreaterThan(1e3);
  });

  it('Adam with a frozen preconditioner: 2(1+β1)/((1−β1)·λmax(P^-1/2 A P^-1/2)); 0.99× converges, 1.01× diverges', () => {
    // from memory: the 38/η threshold at β1 = 0.9 (Cohen et al. 2022); derived in stability.ts as heavy ball with step η(1−β1).
    const p = Float64Array.from({ length: n }, (_, i) => 0.5 + 0.3 * i);
    const r = recipe({ optimizer: 'adam', lr: 1e-3 });
    const metric = stepMetric(r, objective.blocks, p);
    const rep = measureCurvature(objective, w0, r, Rng.fromSeed(2), { metric });
    const s = rep.summary.stability;
    expect(s.rule).toBe('adam-frozen');
    expect(s.preconditioned).toBe(true);
    expect(rep.summary.stepMetric).toBe('frozen diagonal preconditioner P^-1');
    const lr = s.largestStableLr as number;
    expect(growth(frozenAdam(0.99 * lr, 0.9, p), 8000)).toBeLessThan(1e-3);
    expect(growth(frozenAdam(1.01 * lr, 0.9, p), 8000)).toBeGreaterThan(1e3);
    // the preconditioned sharpness differs from the plain one (so the test is not vacuous)
    expect(Math.abs(s.sharpness - LMAX)).toBeGreaterThan(1);
  });

  it('L2 weight decay shifts the sharpness by +wd for SGD', () => {
    // common practice: the gradient g + wd·w is that of f + ½wd‖w‖², Hessian A + wd·I.
    const r = recipe({ weightDecay: 2 });
    const rep = measureCurvature(objective, w0, r, Rng.fromSeed(1), { metric: stepMetric(r, objective.blocks, null) });
    expect(rep.summary.stability.sharpness).toBeCloseTo(LMAX + 2, 10);
    expect(rep.summary.stability.largestStableLr as number).toBeCloseTo(2 / (LMAX + 2), 12);
  });

  it('line-search and Newton-type optimizers report no fixed limit', () => {
    for (const optimizer of ['lbfgs', 'cg', 'newton', 'gauss-newton', 'minibatch-lbfgs'] as const) {
      const s = stabilityBound(recipe({ optimizer }), LMAX);
      expect(s.largestStableLr).toBeNull();
      expect(s.margin).toBeNull();
    }
    expect(stabilityFactor(recipe({ optimizer: 'lbfgs' })).note).toBe('lbfgs chooses its step by a line search; no fixed learning-rate limit applies');
  });

  it('non-positive sharpness sets no limit', () => {
    const s = stabilityBound(recipe(), -3);
    expect(s.largestStableLr).toBe(Infinity);
    expect(s.margin).toBe(0);
  });

  it('adaptive optimizers without a preconditioner fail with an exact message', () => {
    expect(() => stepMetric(recipe({ optimizer: 'adam' }), objective.blocks, null)).toThrow(
      'adam needs its diagonal preconditioner (available after the first step) for the stability bound'
    );
    expect(preconditionerDiagonal(recipe({ optimizer: 'adam' }), { kind: 'adam', t: 0, buffers: {}, scalars: {} })).toBeNull();
  });
});

describe('sharpness limit', () => {
  it('is factor/η: 2/η for plain gradient descent, 2(1+μ)/η for heavy ball', () => {
    // source: CHECKS.md (Nocedal & Wright ch. 3; Polyak 1964): stable iff η·λ < 2 (GD), η·λ < 2(1+μ) (heavy ball)
    const gd = stabilityBound(recipe({ optimizer: 'sgd', lr: 0.1 }), 5);
    expect(gd.sharpnessLimit).toBeCloseTo(20, 12);
    const hb = stabilityBound(recipe({ optimizer: 'sgd', lr: 0.1, momentum: 0.9 }), 5);
    expect(hb.sharpnessLimit).toBeCloseTo(38, 12);
    expect(stabilityBound(recipe({ optimizer: 'lbfgs', lr: 1 }), 5).sharpnessLimit).toBeNull();
  });
});
