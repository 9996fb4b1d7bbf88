/**
 * Analytic objectives a spec can name instead of a network, for sanity-checking a recipe
 * against known answers (and for tests).
 */
import type { Objective, ParamBlock } from '../objective';

function paramBlock(p: number): ParamBlock[] {
  return [{ name: 'x', layer: -1, kind: 'param', offset: 0, size: p, shape: [p] }];
}

/** f(w) = ½ (w − c)ᵀ A (w − c) with a symmetric matrix A (row-major, n × n). */
export class Quadratic implements Objective {
  readonly parameterCount: number;
  readonly blocks: readonly ParamBlock[];
  readonly rowCount = 0;
  private readonly a: Float64Array;
  private readonly c: Float64Array;
  private readonly r: Float64Array;

  /** @param matrix symmetric n × n; @param center c (length n) */
  constructor(matrix: readonly (readonly number[])[], center: readonly number[]) {
    const n = matrix.length;
    this.parameterCount = n;
    this.blocks = paramBlock(n);
    this.a = new Float64Array(n * n);
    matrix.forEach((row, i) => row.forEach((x, j) => { this.a[i * n + j] = x; }));
    this.c = Float64Array.from(center);
    this.r = new Float64Array(n);
  }

  value(w: Float64Array): number {
    this.residual(w);
    const n = this.parameterCount;
    let s = 0;
    for (let i = 0; i < n; i++) {
      let t = 0;
      for (let j = 0; j < n; j++) t += this.a[i * n + j] * this.r[j];
      s += this.r[i] * t;
    }
    return 0.5 * s;
  }

  gradient(w: Float64Array, out: Float64Array): number {
    this.residual(w);
    this.multiply(this.r, out);
    let s = 0;
    for (let i = 0; i < this.parameterCount; i++) s += this.r[i] * out[i];
    return 0.5 * s;
  }

  hvp(_w: Float64Array, v: Float64Array, out: Float64Array): void {
    this.multiply(v, out);
  }

  gnvp(_w: Float64Array, v: Float64Array, out: Float64Array): void {
    this.multiply(v, out);
  }

  private residual(w: Float64Array): void {
    for (let i = 0; i < this.parameterCount; i++) this.r[i] = w[i] - this.c[i];
  }

  private multiply(v: Float64Array, out: Float64Array): void {
    const n = this.parameterCount;
    for (let i = 0; i < n; i++) {
      let t = 0;
      for (let j = 0; j < n; j++) t += this.a[i * n + j] * v[j];
      out[i] = t;
    }
  }
}

/**
 * Chained Rosenbrock function f(x) = Σ_{i<n−1} 100 (x_{i+1} − x_i²)² + (1 − x_i)²
 * (Rosenbrock 1960; for n = 2 the classic (1 − x)² + 100 (y − x²)², minimum 0 at all ones).
 */
export class Rosenbrock implements Objective {
  readonly parameterCount: number;
  readonly blocks: readonly ParamBlock[];
  readonly rowCount = 0;

  /** @param n dimension (≥ 2) */
  constructor(n: number) {
    if (!Number.isInteger(n) || n < 2) throw new RangeError(`rosenbrock needs at least 2 parameters, got ${n}`);
    this.parameterCount = n;
    this.blocks = paramBlock(n);
  }

  value(w: Float64Array): number {
    let s = 0;
    for (let i = 0; i + 1 < this.parameterCount; i++) {
      const a = w[i + 1] - w[i] * w[i];
      const b = 1 - w[i];
      s += 100 * a * a + b * b;
    }
    return s;
  }

  gradient(w: Float64Array, out: Float64Array): number {
    out.fill(0);
    for (let i = 0; i + 1 < this.parameterCount; i++) {
      const a = w[i + 1] - w[i] * w[i];
      out[i] += -400 * w[i] * a - 2 * (1 - w[i]);
      out[i + 1] += 200 * a;
    }
    return this.value(w);
  }

  hvp(w: Float64Array, v: Float64Array, out: Float64Array): void {
    // Per term: ∂²/∂x_i² = 1200 x_i² − 400 x_{i+1} + 2, ∂²/∂x_i∂x_{i+1} = −400 x_i, ∂²/∂x_{i+1}² = 200.
    out.fill(0);
    for (let i = 0; i + 1 < this.parameterCount; i++) {
      const hii = 1200 * w[i] * w[i] - 400 * w[i + 1] + 2;
      const hij = -400 * w[i];
      out[i] += hii * v[i] + hij * v[i + 1];
      out[i + 1] += hij * v[i] + 200 * v[i + 1];
    }
  }

  gnvp(w: Float64Array, v: Float64Array, out: Float64Array): void {
    // Residual form r = (10 (x_{i+1} − x_i²), 1 − x_i): JᵀJ with J rows (−20 x_i, 10), (−1, 0); f = Σ r², so G = 2 JᵀJ.
    out.fill(0);
    for (let i = 0; i + 1 < this.parameterCount; i++) {
      const j1 = -20 * w[i];
      const jv = j1 * v[i] + 10 * v[i + 1];
      out[i] += 2 * (j1 * jv + v[i]);
      out[i + 1] += 2 * 10 * jv;
    }
  }
}
