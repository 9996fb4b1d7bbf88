import { parseSpec } from '../../../src/experiment/index';
import { buildObjective } from '../../../src/core/assemble';
import type { Objective } from '../../../src/core/objective';
import { Rng } from '../../../src/core/rng';
import { lanczosExtremes } from '../../../src/core/linalg/lanczos';
import { hutchinsonTrace } from '../../../src/core/linalg/density';
import { curvatureOperator, denseSpectrum, layerSharpness, lineProfile, measureCurvature } from '../../../src/core/probe/curvature';
import { crossEntropyNetwork, golden } from './fixtures';

// The network case of make_golden.py: a 4-16-16-1 tanh MLP (P = 369) with mse on 40 invented rows.
// source for every expected value here: torch 1.13 float64, torch.autograd.functional.hessian /
// torch.autograd.functional.jacobian and torch.linalg.eigvalsh, via make_golden.py.
const net = golden.network;

function build(): { objective: Objective; w: Float64Array } {
  const parsed = parseSpec(JSON.stringify(net.spec));
  if (!parsed.ok) throw new Error(`golden spec failed to parse: ${JSON.stringify(parsed.errors)}`);
  const objective = buildObjective(parsed.experiment.setup);
  // parameter order: per layer weight [out, in] row-major, then bias
  const flat: number[] = [];
  for (const layer of net.spec.model.weights) {
    for (const row of layer.weight) flat.push(...row);
    flat.push(...layer.bias);
  }
  return { objective, w: Float64Array.from(flat) };
}

const { objective, w } = build();
const top5 = net.hessianEigenvalues.slice(-5).reverse();
const bottom5 = net.hessianEigenvalues.slice(0, 5);

describe('curvature of a tanh MLP against torch', () => {
  it('has the golden parameter count and loss', () => {
    expect(objective.parameterCount).toBe(net.parameterCount);
    expect(objective.value(w)).toBeCloseTo(net.loss, 13);
  });

  it.each(['hessian', 'gauss-newton'] as const)('dense %s spectrum matches torch.linalg.eigvalsh to 1e-12·max|λ|', (kind) => {
    const ref = kind === 'hessian' ? net.hessianEigenvalues : net.gaussNewtonEigenvalues;
    const d = denseSpectrum(objective, w, undefined, kind);
    const scale = Math.max(...ref.map(Math.abs));
    expect(d.asymmetry).toBeLessThan(1e-12);
    expect(d.eigenvalues).toHaveLength(objective.parameterCount);
    expect(ref).toHaveLength(objective.parameterCount);
    d.eigenvalues.forEach((x, i) => expect(Math.abs(x - ref[i])).toBeLessThan(1e-12 * scale));
  });

  it('dense top eigenvector matches torch.linalg.eigh’s (up to sign) and the Lanczos Ritz vector', () => {
    const d = denseSpectrum(objective, w, undefined, 'hessian', { topVectors: 1 });
    const p = objective.parameterCount;
    const u = (d.vectors as Float64Array).subarray(0, p);
    let c = 0;
    for (let i = 0; i < p; i++) c += u[i] * net.topEigenvector[i];
    expect(Math.abs(Math.abs(c) - 1)).toBeLessThan(1e-10);
    const r = lanczosExtremes(curvatureOperator(objective, w).apply, p, Rng.fromSeed(4), { k: 1, vectors: true, tol: 1e-12 });
    const z = r.largest[0].vector as Float64Array;
    c = 0;
    for (let i = 0; i < p; i++) c += z[i] * net.topEigenvector[i];
    expect(Math.abs(Math.abs(c) - 1)).toBeLessThan(1e-8);
  });

  it.each([1, 2, 3])('Lanczos (seed %d) top-5 and bottom-5 of the indefinite Hessian agree with torch to 1e-8 relative', (seed) => {
    const op = curvatureOperator(objective, w);
    const r = lanczosExtremes(op.apply, objective.parameterCount, Rng.fromSeed(seed), { k: 5, which: 'both' });
    expect(r.stop).toBe('converged');
    expect(bottom5[0]).toBeLessThan(0); // the case is indefinite
    expect([r.largest.length, r.smallest.length, top5.length, bottom5.length]).toEqual([5, 5, 5, 5]);
    r.largest.forEach((p, i) => expect(Math.abs(p.value - top5[i])).toBeLessThanOrEqual(1e-8 * Math.abs(top5[i])));
    r.smallest.forEach((p, i) => expect(Math.abs(p.value - bottom5[i])).toBeLessThanOrEqual(1e-8 * Math.abs(bottom5[i])));
  });

  it('summary: dense and Lanczos paths agree on λmax, λmin and the step limit; trace matches torch', () => {
    const recipe = JSON.parse(JSON.stringify(parseSpecRecipe()));
    const dense = measureCurvature(objective, w, recipe, Rng.fromSeed(5));
    const lanczos = measureCurvature(objective, w, recipe, Rng.fromSeed(5), { method: 'lanczos', traceProbes: 100, density: { probes: 6, steps: 60 } });
    expect(dense.summary.lambdaMax).toBeCloseTo(top5[0], 11);
    expect(Math.abs(lanczos.summary.lambdaMax - top5[0])).toBeLessThan(1e-8 * top5[0]);
    expect(Math.abs((lanczos.summary.lambdaMin as number) - bottom5[0])).toBeLessThan(1e-8 * Math.abs(bottom5[0]));
    expect(dense.summary.stability.largestStableLr as number).toBeCloseTo(2 / top5[0], 12);
    expect(dense.summary.trace as number).toBeCloseTo(net.hessianTrace, 10);
    // source: Hutchinson 1989 — within 3 standard errors (seed 5 forked 'trace', 100 probes)
    expect(Math.abs((lanczos.summary.trace as number) - net.hessianTrace)).toBeLessThan(3 * (lanczos.summary.traceStandardError as number));
    const exactNegative = net.hessianEigenvalues.filter((x) => x < -1e-6 * top5[0]).length / net.parameterCount;
    expect(dense.summary.negativeShare).toBeCloseTo(exactNegative, 15);
    expect(Math.abs((lanczos.summary.negativeShare as number) - exactNegative)).toBeLessThan(0.1);
  });

  it('Hutchinson on the Gauss-Newton matrix is within 3 standard errors of its exact trace (seed 8, 200 probes)', () => {
    const op = curvatureOperator(objective, w, { kind: 'gauss-newton' });
    const t = hutchinsonTrace(op.apply, objective.parameterCount, Rng.fromSeed(8), { probes: 200 });
    expect(Math.abs(t.estimate - net.gaussNewtonTrace)).toBeLessThan(3 * t.standardError);
  });

  it('per-layer block λmax matches torch on each diagonal block (weight + bias of one layer)', () => {
    const layers = layerSharpness(objective, w, Rng.fromSeed(6), { tol: 1e-11 });
    expect(layers.map((l) => l.layer)).toEqual([0, 1, 2]);
    expect(layers.map((l) => l.size)).toEqual([80, 272, 17]);
    layers.forEach((l, i) => expect(Math.abs(l.lambdaMax - net.layerBlockLambdaMax[i])).toBeLessThan(1e-8 * net.layerBlockLambdaMax[i]));
    // source: Cauchy interlacing (Horn & Johnson, thm. 4.3.28): no block exceeds the full λmax.
    for (const l of layers) expect(l.lambdaMax).toBeLessThanOrEqual(top5[0] + 1e-10);
    expect(layers[0].blocks).toEqual(['layers[0].weight', 'layers[0].bias']);
  });

  it('line profile along the top eigenvector matches torch’s f(w + t·u)', () => {
    const u = Float64Array.from(net.topEigenvector);
    const prof = lineProfile(objective, w, u, { offsets: net.profile.t });
    expect(prof.loss).toHaveLength(net.profile.loss.length);
    expect(net.profile.loss.length).toBeGreaterThan(4);
    prof.loss.forEach((x, i) => expect(x).toBeCloseTo(net.profile.loss[i], 12));
    // the quadratic model's curvature along an eigenvector is its eigenvalue
    expect(prof.curvature).toBeCloseTo(top5[0], 10);
    const mid = net.profile.t.indexOf(0);
    expect(prof.quadratic[mid]).toBeCloseTo(net.loss, 13);
  });
});

describe('curvature of a softmax cross-entropy MLP against torch (P = 891)', () => {
  // source: torch 1.13 float64, torch.autograd.functional.hessian + torch.linalg.eigvalsh of
  // F.cross_entropy on the same hash-built weights and data (make_golden.py ce_network_case).
  const ce = golden.crossEntropyNetwork;
  const { setup, w: wc } = crossEntropyNetwork();
  const obj = buildObjective(setup);

  it('has the golden parameter count and loss', () => {
    expect(obj.parameterCount).toBe(ce.parameterCount);
    expect(obj.value(wc)).toBeCloseTo(ce.loss, 13);
  });

  it('dense spectrum matches torch to 1e-12·max|λ| and the trace to 1e-10', () => {
    const d = denseSpectrum(obj, wc);
    const scale = Math.max(...ce.eigenvalues.map(Math.abs));
    expect(d.eigenvalues).toHaveLength(ce.parameterCount);
    expect(ce.eigenvalues).toHaveLength(ce.parameterCount);
    d.eigenvalues.forEach((x, i) => expect(Math.abs(x - ce.eigenvalues[i])).toBeLessThan(1e-12 * scale));
    expect(d.eigenvalues.reduce((s, x) => s + x, 0)).toBeCloseTo(ce.trace, 10);
  });

  it('Lanczos top-5 and bottom-5 (indefinite) agree with torch to 1e-8 relative', () => {
    const r = lanczosExtremes(curvatureOperator(obj, wc).apply, obj.parameterCount, Rng.fromSeed(9), { k: 5, which: 'both' });
    expect(r.stop).toBe('converged');
    expect(ce.bottom5[0]).toBeLessThan(0);
    expect([r.largest.length, r.smallest.length, ce.top5.length, ce.bottom5.length]).toEqual([5, 5, 5, 5]);
    r.largest.forEach((p, i) => expect(Math.abs(p.value - ce.top5[i])).toBeLessThanOrEqual(1e-8 * Math.abs(ce.top5[i])));
    r.smallest.forEach((p, i) => expect(Math.abs(p.value - ce.bottom5[i])).toBeLessThanOrEqual(1e-8 * Math.abs(ce.bottom5[i])));
  });
});

function parseSpecRecipe() {
  const parsed = parseSpec(JSON.stringify(net.spec));
  if (!parsed.ok) throw new Error('golden spec failed to parse');
  return parsed.experiment.recipe;
}
