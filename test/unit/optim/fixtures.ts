/**
 * Objectives for the optimizer tests: the engine's analytic quadratic and Rosenbrock functions
 * (themselves checked against PyTorch) and a least-squares regression over rows with two
 * weight blocks.
 */
import type { Objective, ParamBlock, Rows } from '../../../src/core/objective';
import { Rosenbrock } from '../../../src/core/model/analytic';
import type { Experiment, Recipe } from '../../../src/core/setup';

/** Defaults as documented in src/core/setup.ts. */
export function recipe(patch: Partial<Recipe> = {}): Recipe {
  return {
    optimizer: 'sgd', lr: 0.01, momentum: 0, nesterov: false, dampening: 0, beta1: 0.9, beta2: 0.999, eps: 1e-8, alpha: 0.99,
    centered: false, amsgrad: false, lrDecay: 0, initialAccumulator: 0, weightDecay: 0, decayBiases: true, batch: 'full',
    schedule: { kind: 'constant' }, warmup: 0, clipNorm: 0, clipValue: 0, layers: [], history: 10, maxIter: 1, maxEval: 26,
    toleranceGrad: 1e-7, toleranceChange: 1e-9, lineSearch: 'strong-wolfe', cgVariant: 'polak-ribiere', damping: 1e-3,
    innerSteps: 10, curvatureBatch: 'same', ...patch
  };
}

/** An experiment whose setup is a Rosenbrock model (the session gets its objective injected). */
export function experiment(patch: Partial<Recipe> = {}, seed = 7): Experiment {
  return { seed, setup: { model: { kind: 'rosenbrock', start: [-1.2, 1] }, loss: 'mse', l2: 0 }, recipe: recipe(patch) };
}


/** f(w) = ½ (w − c)ᵀ A (w − c): the engine's own analytic quadratic (checked against PyTorch in test/reference/model). */
export { Quadratic as TestQuadratic } from '../../../src/core/model/analytic';

/** The 2-D Rosenbrock function (Rosenbrock 1960), the engine's own (checked against PyTorch in test/reference/model). */
export class TestRosenbrock extends Rosenbrock {
  constructor() {
    super(2);
  }
}

/**
 * Mean-squared-error linear regression f(w) = 1/(2n) Σ_rows (x_r·w − y_r)², two "layers"
 * (weight blocks) so per-layer records have something to report.
 */
export class TestLeastSquares implements Objective {
  readonly parameterCount: number;
  readonly blocks: readonly ParamBlock[];
  constructor(readonly x: Float64Array, readonly y: Float64Array, readonly rowCount: number) {
    const p = x.length / rowCount;
    this.parameterCount = p;
    const h = Math.floor(p / 2);
    this.blocks = [
      { name: 'layers[0].weight', layer: 0, kind: 'weight', offset: 0, size: h, shape: [1, h] },
      { name: 'layers[1].weight', layer: 1, kind: 'weight', offset: h, size: p - h, shape: [1, p - h] }
    ];
  }
  private each(rows: Rows, fn: (r: number) => void): number {
    if (rows === undefined) {
      for (let r = 0; r < this.rowCount; r++) fn(r);
      return this.rowCount;
    }
    for (let k = 0; k < rows.length; k++) fn(rows[k]);
    return rows.length;
  }
  private res(w: Float64Array, r: number): number {
    let s = -this.y[r];
    for (let j = 0; j < this.parameterCount; j++) s += this.x[r * this.parameterCount + j] * w[j];
    return s;
  }
  value(w: Float64Array, rows?: Rows): number {
    let s = 0;
    const n = this.each(rows, (r) => { const e = this.res(w, r); s += e * e; });
    return s / (2 * n);
  }
  gradient(w: Float64Array, out: Float64Array, rows?: Rows): number {
    out.fill(0);
    let s = 0;
    const p = this.parameterCount;
    const n = this.each(rows, (r) => {
      const e = this.res(w, r);
      s += e * e;
      for (let j = 0; j < p; j++) out[j] += e * this.x[r * p + j];
    });
    for (let j = 0; j < p; j++) out[j] /= n;
    return s / (2 * n);
  }
  hvp(_w: Float64Array, v: Float64Array, out: Float64Array, rows?: Rows): void {
    out.fill(0);
    const p = this.parameterCount;
    const n = this.each(rows, (r) => {
      let xv = 0;
      for (let j = 0; j < p; j++) xv += this.x[r * p + j] * v[j];
      for (let j = 0; j < p; j++) out[j] += xv * this.x[r * p + j];
    });
    for (let j = 0; j < p; j++) out[j] /= n;
  }
  gnvp(w: Float64Array, v: Float64Array, out: Float64Array, rows?: Rows): void {
    this.hvp(w, v, out, rows);
  }
}

/** A seeded regression problem (scenario of our own): n rows, p features, y = x·w* + noise. */
export function leastSquares(n: number, p: number): TestLeastSquares {
  let s = 12345;
  const u = (): number => {
    s = (Math.imul(s, 1103515245) + 12345) >>> 0;
    return s / 4294967296 - 0.5;
  };
  const x = new Float64Array(n * p);
  const y = new Float64Array(n);
  for (let i = 0; i < x.length; i++) x[i] = 2 * u();
  for (let r = 0; r < n; r++) {
    let t = 0.1 * u();
    for (let j = 0; j < p; j++) t += x[r * p + j] * (j + 1) / p;
    y[r] = t;
  }
  return new TestLeastSquares(x, y, n);
}
