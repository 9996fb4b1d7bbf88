/**
 * The deeper readouts against PyTorch, NumPy and SciPy (deeper.json, made by make_deeper.py beside
 * it) on a network whose hidden layer is the user's own activation x / (1 + |x|) written as an
 * expression: the gradient, the loss along the SGD step and along the top Hessian eigenvector with
 * Brent's minimum, the plane of the top two eigenvectors, a range test, and rounded weights.
 *
 * Tolerances: 1e-12 relative for losses at the same weights (float64 on both sides, sums in a
 * different order); 1e-10 for gradient and curvature; 1e-7 for Brent's abscissa (both stop at a
 * relative tolerance near 1e-8 to 1e-10); 1e-8 for Lanczos's eigenvalue and vector against eigh.
 */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { parseSpecValue } from '../../../src/experiment';
import { buildObjective } from '../../../src/core/assemble';
import { Session } from '../../../src/core/session/live';
import { Rng } from '../../../src/core/rng';
import { lineReadout } from '../../../src/core/probe/line';
import { planeReadout } from '../../../src/core/probe/slice';
import { topEigendirections } from '../../../src/core/probe/directions';
import { rangeTest } from '../../../src/core/probe/range-test';
import { precisionAt, peekUpdate } from '../../../src/core/probe/readouts-at';

interface Golden {
  spec: unknown;
  loss: number;
  gradient: number[];
  update: { t: number[]; loss: number[]; slope: number; curvature: number; brent: number; brentLoss: number };
  eigen: { lambdaMax: number; lambda2: number; vector: number[]; vector2: number[]; t: number[]; loss: number[]; stepAt: number; brent: number; brentLoss: number };
  plane: { axis: number[]; loss: number[][] };
  range: { lr: number[]; loss: number[] };
  precision: { bits: number; loss: number }[];
}

const g = JSON.parse(readFileSync(join(__dirname, 'deeper.json'), 'utf8')) as Golden;
const rel = (a: number, b: number): number => Math.abs(a - b) / Math.max(Math.abs(b), 1e-300);
const parsed = parseSpecValue(g.spec);
if (!parsed.ok) throw new Error(parsed.errors.map((e) => e.message).join('\n'));
const experiment = parsed.experiment;
const objective = buildObjective(experiment.setup);
const session = Session.create(experiment);
const w = Float64Array.from(session.parameters);
const dot = (a: ArrayLike<number>, b: ArrayLike<number>): number => Array.from(a).reduce((s, x, i) => s + x * b[i], 0);

describe('deeper readouts against PyTorch / NumPy / SciPy on an expression activation', () => {
  it('the expression network has torch autograd\'s loss and gradient', () => {
    const grad = new Float64Array(w.length);
    // source: torch.autograd.grad of mean (softsign MLP − y)², PyTorch 1.13
    expect(rel(objective.gradient(w, grad), g.loss)).toBeLessThan(1e-12);
    expect(g.gradient.length).toBe(w.length);
    g.gradient.forEach((x, i) => expect(Math.abs(grad[i] - x)).toBeLessThan(1e-10 * Math.max(...g.gradient.map(Math.abs))));
  });

  it('Lanczos finds eigh\'s top two eigenpairs', () => {
    const top = topEigendirections(objective, w, 2, Rng.fromSeed(1).fork('lanczos'));
    expect(top.length).toBe(2);
    // source: numpy.linalg.eigh of torch.autograd.functional.hessian (NumPy 1.24, PyTorch 1.13)
    expect(rel(top[0].value, g.eigen.lambdaMax)).toBeLessThan(1e-8);
    expect(rel(top[1].value, g.eigen.lambda2)).toBeLessThan(1e-8);
    expect(Math.abs(dot(top[0].vector, g.eigen.vector))).toBeGreaterThan(1 - 1e-8);
    expect(Math.abs(dot(top[1].vector, g.eigen.vector2))).toBeGreaterThan(1 - 1e-8);
  });

  it('the line readout matches torch along the SGD step and the eigenvector, and Brent matches scipy.optimize.brent', () => {
    const dw = peekUpdate(session);
    const r = lineReadout(objective, w, 0, dw, { value: g.eigen.lambdaMax, vector: Float64Array.from(g.eigen.vector) }, { points: 13, tol: 1e-10 });
    expect(r.update.t.length).toBe(g.update.t.length);
    r.update.t.forEach((t, i) => { expect(Math.abs(t - g.update.t[i])).toBeLessThan(1e-15); expect(rel(r.update.loss[i], g.update.loss[i])).toBeLessThan(1e-12); });
    expect(rel(r.update.slope, g.update.slope)).toBeLessThan(1e-10);
    expect(rel(r.update.curvature, g.update.curvature)).toBeLessThan(1e-10); // source: Δwᵀ·H·Δw with torch's Hessian
    // source: scipy.optimize.brent(phi, brack=(0, 1), tol=1e-10), SciPy 1.10
    expect(rel(r.update.minimum.t as number, g.update.brent)).toBeLessThan(1e-7);
    expect(rel(r.update.minimum.loss as number, g.update.brentLoss)).toBeLessThan(1e-12);
    const e = r.eigenvector!;
    expect(e.t.length).toBe(g.eigen.t.length);
    e.t.forEach((t, i) => { expect(Math.abs(t - g.eigen.t[i])).toBeLessThan(1e-15); expect(rel(e.loss[i], g.eigen.loss[i])).toBeLessThan(1e-12); });
    expect(rel(e.curvature, g.eigen.lambdaMax)).toBeLessThan(1e-10);
    expect(rel(e.stepAt, g.eigen.stepAt)).toBeLessThan(1e-10);
    expect(rel(e.minimum.t as number, g.eigen.brent)).toBeLessThan(1e-7);
  });

  it('the plane of eigh\'s top two eigenvectors has torch\'s losses', () => {
    const r = planeReadout(objective, w, 0, 'eigenvectors', { d1: Float64Array.from(g.eigen.vector), d2: Float64Array.from(g.eigen.vector2) }, { steps: [], weights: [] }, { points: 5, span: 0.5 })!;
    expect(r.loss.length).toBe(5);
    r.alpha.forEach((a, i) => expect(Math.abs(a - g.plane.axis[i])).toBeLessThan(1e-15));
    r.loss.forEach((row, j) => { expect(row.length).toBe(5); row.forEach((v, i) => expect(rel(v, g.plane.loss[j][i])).toBeLessThan(1e-12)); });
  });

  it('the range test follows torch SGD with the same rate each update', () => {
    const r = rangeTest(experiment, session.state(), objective, { from: 1e-3, to: 3, steps: 12, blowUp: 1e9 });
    expect(r.lr.length).toBe(12);
    r.lr.forEach((eta, i) => expect(rel(eta, g.range.lr[i])).toBeLessThan(1e-14));
    // source: torch autograd gradient and w ← w − η·g per rate, PyTorch 1.13 (rates agree to a few ulps)
    r.loss.forEach((l, i) => expect(rel(l, g.range.loss[i])).toBeLessThan(1e-9));
  });

  it('precision rows have the loss torch gives at NumPy-rounded weights', () => {
    const p = precisionAt(session);
    expect(p.rows.length).toBe(6);
    expect(p.rows.slice(1).map((r) => r.bits)).toEqual(g.precision.map((x) => x.bits));
    // source: numpy.ldexp(numpy.round(numpy.ldexp(m, k)), e − k) with (m, e) = numpy.frexp(w) (round half to even), NumPy 1.24
    p.rows.slice(1).forEach((r, i) => expect(rel(r.loss, g.precision[i].loss)).toBeLessThan(1e-12));
  });
});
