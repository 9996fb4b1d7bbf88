/**
 * Small objectives written for these tests (independent of core/model): a quadratic
 * ½(w − c)ᵀA(w − c), the Rosenbrock function and a least-squares regression over rows.
 */
import type { Objective, ParamBlock, Rows } from '../../../src/core/objective';
import type { Experiment, Recipe } from '../../../src/core/setup';

/** Defaults as documented in src/core/setup.ts. */
export function recipe(patch: Partial<Recipe> = {}): Recipe {
  return {
    optimizer: 'sgd', lr: 0.01, momentum: 0, nesterov: false, beta1: 0.9, beta2: 0.999, eps: 1e-8, alpha: 0.99,
    centered: false, amsgrad: false, weightDecay: 0, batch: 'full', schedule: { kind: 'constant' }, warmup: 0,
    clipNorm: 0, layers: [], history: 10, lineSearch: 'strong-wolfe', cgVariant: 'polak-ribiere', damping: 1e-3,
    innerSteps: 10, curvatureBatch: 'same', ...patch
  };
}

/** An experiment whose setup is a Rosenbrock model (the session gets its objective injected). */
export function experiment(patch: Partial<Recipe> = {}, seed = 7): Experiment {
  return { seed, setup: { model: { kind: 'rosenbrock', start: [-1.2, 1] }, loss: 'mse', l2: 0 }, recipe: recipe(patch) };
}

function paramBlocks(p: number): ParamBlock[] {
  return [{ name: 'x', layer: -1, kind: 'param', offset: 0, size: p, shape: [p] }];
}

/** f(w) = ½ (w − c)ᵀ A (w − c), A dense symmetric (row-major). */
export class TestQuadratic implements Objective {
  readonly parameterCount: number;
  readonly blocks: readonly ParamBlock[];
  readonly rowCount = 0;
  private readonly r: Float64Array;
  constructor(readonly a: number[][], readonly c: number[]) {
    this.parameterCount = c.length;
    this.blocks = paramBlocks(c.length);
    this.r = new Float64Array(c.length);
  }
  private mul(v: Float64Array, out: Float64Array): void {
    const n = this.parameterCount;
    for (let i = 0; i < n; i++) {
      let s = 0;
      for (let j = 0; j < n; j++) s += this.a[i][j] * v[j];
      out[i] = s;
    }
  }
  value(w: Float64Array): number {
    const g = new Float64Array(this.parameterCount);
    return this.gradient(w, g);
  }
  gradient(w: Float64Array, out: Float64Array): number {
    for (let i = 0; i < this.parameterCount; i++) this.r[i] = w[i] - this.c[i];
    this.mul(this.r, out);
    let s = 0;
    for (let i = 0; i < this.parameterCount; i++) s += this.r[i] * out[i];
    return 0.5 * s;
  }
  hvp(_w: Float64Array, v: Float64Array, out: Float64Array): void {
    this.mul(v, out);
  }
  gnvp(w: Float64Array, v: Float64Array, out: Float64Array): void {
    this.hvp(w, v, out);
  }
}

/** f(x, y) = (1 − x)² + 100 (y − x²)² (Rosenbrock 1960). */
export class TestRosenbrock implements Objective {
  readonly parameterCount = 2;
  readonly blocks = paramBlocks(2);
  readonly rowCount = 0;
  value(w: Float64Array): number {
    const [x, y] = w;
    return (1 - x) ** 2 + 100 * (y - x * x) ** 2;
  }
  gradient(w: Float64Array, out: Float64Array): number {
    const [x, y] = w;
    out[0] = -2 * (1 - x) - 400 * x * (y - x * x);
    out[1] = 200 * (y - x * x);
    return this.value(w);
  }
  hvp(w: Float64Array, v: Float64Array, out: Float64Array): void {
    const [x, y] = w;
    const hxx = 2 - 400 * (y - x * x) + 800 * x * x;
    const hxy = -400 * x;
    out[0] = hxx * v[0] + hxy * v[1];
    out[1] = hxy * v[0] + 200 * v[1];
  }
  gnvp(w: Float64Array, v: Float64Array, out: Float64Array): void {
    // Residuals r = (1 − x, 10(y − x²)), f = Σ r²: G = 2JᵀJ.
    const x = w[0];
    const j = [[-1, 0], [-20 * x, 10]];
    const jv = [j[0][0] * v[0] + j[0][1] * v[1], j[1][0] * v[0] + j[1][1] * v[1]];
    out[0] = 2 * (j[0][0] * jv[0] + j[1][0] * jv[1]);
    out[1] = 2 * (j[0][1] * jv[0] + j[1][1] * jv[1]);
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
