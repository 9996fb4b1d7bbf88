/** Shared builders for the curvature probe tests: recipes, quadratics with a chosen spectrum. */
import { RECIPE_DEFAULTS } from '../../../src/experiment/normalize';
import type { Recipe } from '../../../src/core/setup';
import { Quadratic } from '../../../src/core/model/analytic';
import { hashUniform, matmul, transpose } from '../../reference/curvature/fixtures';

/** A complete recipe: the spec defaults plus overrides. */
export function recipe(overrides: Partial<Recipe> = {}): Recipe {
  return { ...RECIPE_DEFAULTS, layers: [], schedule: { kind: 'constant' }, ...overrides };
}

/** Orthogonal Q = H1·H2 (two Householder reflectors from hash vectors). */
export function orthogonal(n: number, seed: number): Float64Array {
  const refl = (s: number): Float64Array => {
    const v = Float64Array.from({ length: n }, (_, k) => hashUniform(s, k, 0));
    let vv = 0;
    for (const x of v) vv += x * x;
    const h = new Float64Array(n * n);
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) h[i * n + j] = (i === j ? 1 : 0) - (2 * v[i] * v[j]) / vv;
    return h;
  };
  return matmul(refl(seed), refl(seed + 1), n);
}

/** A = Q·diag(spectrum)·Qᵀ as rows, and f(w) = ½(w − c)ᵀA(w − c) with c = 0. */
export function quadraticWithSpectrum(spectrum: readonly number[], seed = 3): { a: Float64Array; rows: number[][]; objective: Quadratic; n: number } {
  const n = spectrum.length;
  const q = orthogonal(n, seed);
  const qd = new Float64Array(n * n);
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) qd[i * n + j] = q[i * n + j] * spectrum[j];
  const a = matmul(qd, transpose(q, n), n);
  // exact symmetry (the product is symmetric only up to rounding)
  for (let i = 0; i < n; i++) for (let j = 0; j < i; j++) a[j * n + i] = a[i * n + j];
  const rows = Array.from({ length: n }, (_, i) => Array.from(a.subarray(i * n, i * n + n)));
  return { a, rows, objective: new Quadratic(rows, new Array<number>(n).fill(0)), n };
}

/** ‖x‖₂. */
export function norm(x: Float64Array): number {
  let s = 0;
  for (const v of x) s += v * v;
  return Math.sqrt(s);
}

/** y = A·x for row-major A. */
export function mul(a: Float64Array, x: Float64Array): Float64Array {
  const n = x.length;
  const y = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    let s = 0;
    for (let j = 0; j < n; j++) s += a[i * n + j] * x[j];
    y[i] = s;
  }
  return y;
}
