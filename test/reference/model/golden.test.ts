/**
 * The network and analytic objectives against PyTorch autograd in float64.
 *
 * Every expected number below comes from golden.json, written by make_golden.py in this
 * folder (header: torch/numpy/python versions, command, date). The cases are invented
 * by that script; only the values torch computed from them are used as expectations.
 *
 * Tolerances:
 * - loss, gradient, H·v, G·v: relative error ‖a − b‖ / max(‖b‖, 1e-300) ≤ 1e-9. Both sides
 *   evaluate the same closed-form float64 quantity in a different order of operations and
 *   with different libm implementations of tanh/exp/erf (an ulp or so apart); for these
 *   small, well-scaled cases that moves results by ~1e-14 relative, and any missing or wrong
 *   derivative term moves them by ≥1e-6. 1e-9 sits between with wide margins either way.
 *   Measured when written: ≤ 8e-16 for loss, gradient, H·v and G·v over all cases.
 * - eigenvalues: |λᵢ − μᵢ| ≤ 1e-8 · max|μ| after sorting. Weyl's inequality bounds each
 *   eigenvalue's shift by the spectral norm of the matrix perturbation
 *   (source: Golub & Van Loan, Matrix Computations, 4th ed., §8.1), so the error is
 *   measured against the spectral radius; eigenvalues near zero have no relative accuracy.
 *   Measured when written: ≤ 8e-15.
 */
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { parseSpec } from '../../../src/experiment';
import { buildObjective, initialParameters } from '../../../src/core/assemble';
import { Rng } from '../../../src/core/rng';
import type { Objective } from '../../../src/core/objective';
import type { Setup } from '../../../src/core/setup';
import { readFileSync } from 'fs';
import { join } from 'path';
import { relErr } from '../compare';

interface Batch {
  rows: number[];
  loss: number;
  gradient: number[];
  hv: number[];
  gnv: number[];
}
interface NetCase {
  name: string;
  P: number;
  spec: unknown;
  loss: number;
  gradient: number[];
  v: number[];
  hv: number[];
  gnv: number[];
  hessianEigenvalues?: number[];
  gnEigenvalues?: number[];
  batches?: Batch[];
}
interface AnalyticCase {
  name: string;
  model: { kind: 'rosenbrock'; start: number[] } | { kind: 'quadratic'; matrix: number[][]; center: number[]; start: number[] };
  point: number[];
  value: number;
  gradient: number[];
  hessian: number[][];
  hessianEigenvalues: number[];
}

const golden = JSON.parse(readFileSync(join(__dirname, 'golden.json'), 'utf8')) as { cases: NetCase[]; analytic: AnalyticCase[] };
const cases = golden.cases;
const analytic = golden.analytic;
const REL = 1e-9;
const EIG_REL = 1e-8;

function scalarErr(a: number, b: number): number {
  return Math.abs(a - b) / Math.max(Math.abs(b), 1e-300);
}

/** Largest |λᵢ − μᵢ| over sorted spectra, divided by max|μ|. */
function spectrumErr(got: number[], want: number[]): number {
  if (got.length !== want.length) return Infinity;
  const g = [...got].sort((x, y) => x - y);
  const w = [...want].sort((x, y) => x - y);
  const scale = Math.max(...w.map(Math.abs), 1e-300);
  return Math.max(...g.map((x, i) => Math.abs(x - w[i]))) / scale;
}

/** Dense symmetric matrix from P products with the unit vectors (test-only oracle path). */
function denseFromProducts(P: number, product: (e: Float64Array, out: Float64Array) => void): Matrix {
  const m = new Matrix(P, P);
  const e = new Float64Array(P);
  const col = new Float64Array(P);
  for (let j = 0; j < P; j++) {
    e.fill(0);
    e[j] = 1;
    product(e, col);
    for (let i = 0; i < P; i++) m.set(i, j, col[i]);
  }
  // symmetrize: the products are symmetric up to round-off
  return m.add(m.transpose()).mul(0.5);
}

function eigenvalues(m: Matrix): number[] {
  return new EigenvalueDecomposition(m, { assumeSymmetric: true }).realEigenvalues;
}

function setupOf(c: NetCase): Setup {
  const parsed = parseSpec(JSON.stringify(c.spec));
  if (!parsed.ok) throw new Error(`${c.name}: spec rejected: ${JSON.stringify(parsed.errors)}`);
  return parsed.experiment.setup;
}

function build(c: NetCase): { f: Objective; w: Float64Array } {
  const setup = setupOf(c);
  // explicit weights in the spec override the seeded draw, so the generator is irrelevant
  return { f: buildObjective(setup), w: initialParameters(setup, Rng.fromSeed(1).fork('init')) };
}

describe('golden file', () => {
  it('covers every activation, every loss and both l2 settings', () => {
    type Spec = { model: { layers: { activation: string }[] }; loss: string; regularization: { l2: number } };
    // the committed file holds 24 network cases (6 with mini-batch rows, 7 row sets) and 9 analytic ones
    expect(cases).toHaveLength(24);
    expect(golden.analytic).toHaveLength(9);
    expect(cases.flatMap((c) => c.batches ?? [])).toHaveLength(7);
    const specs = cases.map((c) => c.spec as Spec);
    const hidden = new Set(specs.flatMap((s) => s.model.layers.slice(0, -1).map((l) => l.activation)));
    expect([...hidden].sort()).toEqual(['elu', 'gelu', 'leaky-relu', 'linear', 'relu', 'sigmoid', 'softplus', 'tanh']);
    expect(new Set(specs.map((s) => s.loss))).toEqual(new Set(['mse', 'cross-entropy', 'binary-cross-entropy']));
    expect(specs.some((s) => s.regularization.l2 > 0) && specs.some((s) => s.regularization.l2 === 0)).toBe(true);
  });
});

// source: PyTorch 1.13 autograd, float64 (test/reference/model/make_golden.py)
describe.each(cases.map((c) => [c.name, c] as const))('network %s', (_name, c) => {
  it('lays out the explicit weights as the flat vector of the right size', () => {
    const { f, w } = build(c);
    expect(f.parameterCount).toBe(c.P);
    expect(w.length).toBe(c.P);
  });

  it('loss and gradient match torch to 1e-9 relative', () => {
    const { f, w } = build(c);
    const g = new Float64Array(c.P);
    const val = f.gradient(w, g);
    expect(scalarErr(val, c.loss)).toBeLessThanOrEqual(REL);
    expect(scalarErr(f.value(w), c.loss)).toBeLessThanOrEqual(REL);
    expect(relErr(g, c.gradient)).toBeLessThanOrEqual(REL);
  });

  it('Hessian-vector product matches torch double backward to 1e-9 relative', () => {
    const { f, w } = build(c);
    const out = new Float64Array(c.P);
    f.hvp(w, Float64Array.from(c.v), out);
    expect(relErr(out, c.hv)).toBeLessThanOrEqual(REL);
  });

  it('Gauss-Newton product matches torch Jᵀ·H_out·J·v to 1e-9 relative', () => {
    const { f, w } = build(c);
    const out = new Float64Array(c.P);
    f.gnvp(w, Float64Array.from(c.v), out);
    expect(relErr(out, c.gnv)).toBeLessThanOrEqual(REL);
  });

  if (c.hessianEigenvalues && c.gnEigenvalues) {
    const hEig = c.hessianEigenvalues;
    const gEig = c.gnEigenvalues;
    it('dense Hessian from P products has torch eigvalsh spectrum (1e-8 of spectral radius)', () => {
      const { f, w } = build(c);
      const H = denseFromProducts(c.P, (e, out) => f.hvp(w, e, out));
      expect(spectrumErr(eigenvalues(H), hEig)).toBeLessThanOrEqual(EIG_REL);
    });

    it('dense Gauss-Newton matrix has torch eigvalsh spectrum (1e-8 of spectral radius)', () => {
      const { f, w } = build(c);
      const G = denseFromProducts(c.P, (e, out) => f.gnvp(w, e, out));
      expect(spectrumErr(eigenvalues(G), gEig)).toBeLessThanOrEqual(EIG_REL);
      // invariant: the Gauss-Newton matrix of a convex loss is positive semi-definite
      // (source: Schraudolph, "Fast curvature matrix-vector products", Neural Computation 2002)
      expect(Math.min(...gEig)).toBeGreaterThan(-1e-10 * Math.max(...gEig.map(Math.abs)));
    });
  }

  if (c.batches) {
    const batches = c.batches;
    it.each(batches.map((b) => [b.rows.join(','), b] as const))('mini-batch rows [%s] match torch to 1e-9 relative', (_r, b) => {
      const { f, w } = build(c);
      const rows = Int32Array.from(b.rows);
      const g = new Float64Array(c.P);
      const hv = new Float64Array(c.P);
      const gv = new Float64Array(c.P);
      const v = Float64Array.from(c.v);
      const val = f.gradient(w, g, rows);
      f.hvp(w, v, hv, rows);
      f.gnvp(w, v, gv, rows);
      expect(scalarErr(val, b.loss)).toBeLessThanOrEqual(REL);
      expect(scalarErr(f.value(w, rows), b.loss)).toBeLessThanOrEqual(REL);
      expect(relErr(g, b.gradient)).toBeLessThanOrEqual(REL);
      expect(relErr(hv, b.hv)).toBeLessThanOrEqual(REL);
      expect(relErr(gv, b.gnv)).toBeLessThanOrEqual(REL);
      // a subset is a different objective: the full-batch gradient must not be returned
      expect(relErr(g, c.gradient)).toBeGreaterThan(1e-3);
    });
  }
});

// source: PyTorch 1.13 autograd, float64 (test/reference/model/make_golden.py)
describe.each(analytic.map((a) => [a.name, a] as const))('analytic %s', (_name, a) => {
  /** The analytic objective as a spec names it, started at the golden point. */
  function specText(): string {
    const m = a.model;
    const model = m.kind === 'rosenbrock'
      ? { objective: 'rosenbrock', start: a.point }
      : { objective: 'quadratic', matrix: m.matrix, center: m.center, start: a.point };
    return JSON.stringify({ seed: 1, model, recipe: { optimizer: 'sgd', lr: 0.001 } });
  }

  it('value, gradient and dense Hessian (from hvp) match torch to 1e-9 relative', () => {
    const parsed = parseSpec(specText());
    if (!parsed.ok) throw new Error(`${a.name}: spec rejected: ${JSON.stringify(parsed.errors)}`);
    const setup = parsed.experiment.setup;
    expect(setup.model.kind).toBe(a.model.kind);
    const f = buildObjective(setup);
    const n = a.point.length;
    const w = initialParameters(setup, Rng.fromSeed(1).fork('init'));
    expect(Array.from(w)).toEqual(a.point);
    const g = new Float64Array(n);
    expect(scalarErr(f.gradient(w, g), a.value)).toBeLessThanOrEqual(REL);
    expect(scalarErr(f.value(w), a.value)).toBeLessThanOrEqual(REL);
    // at the minimum both are exactly zero: compare absolutely there
    if (a.value === 0) expect(Math.max(...g.map(Math.abs))).toBe(0);
    else expect(relErr(g, a.gradient)).toBeLessThanOrEqual(REL);
    const H = denseFromProducts(n, (e, out) => f.hvp(w, e, out));
    expect(relErr(H.to1DArray(), a.hessian.flat())).toBeLessThanOrEqual(REL);
    expect(spectrumErr(eigenvalues(H), a.hessianEigenvalues)).toBeLessThanOrEqual(EIG_REL);
  });
});

describe('Rosenbrock at its minimum', () => {
  it('has the published Hessian [[802, −400], [−400, 200]] and eigenvalues 501 ± √250601', () => {
    // source: Rosenbrock 1960; Nocedal & Wright, Numerical Optimization, 2nd ed., 2006, §2
    const f = buildObjective({ model: { kind: 'rosenbrock', start: [-1.2, 1] }, loss: 'mse', l2: 0 });
    const H = denseFromProducts(2, (e, out) => f.hvp(Float64Array.from([1, 1]), e, out));
    expect(H.to2DArray()).toEqual([[802, -400], [-400, 200]]);
    const eig = eigenvalues(H).sort((x, y) => x - y);
    expect(eig[0]).toBeCloseTo(501 - Math.sqrt(250601), 10);
    expect(eig[1]).toBeCloseTo(501 + Math.sqrt(250601), 10);
    // classic start value f(−1.2, 1) = 24.2
    expect(f.value(Float64Array.from([-1.2, 1]))).toBeCloseTo(24.2, 12);
  });
});
