/**
 * Brent's method for one-dimensional minimization (Brent, Algorithms for Minimization without
 * Derivatives, 1973, ch. 5; Press et al., Numerical Recipes 3rd ed. §10.3): golden-section
 * steps, replaced by the vertex of the parabola through the three best points whenever that
 * vertex lies inside the bracket and the step is less than half the step before last.
 */
import { GOLDEN_FRACTION, type Bracket, type LineResult } from './types';

/** Options of {@link brentMinimize}. */
export interface BrentOptions {
  /** Relative tolerance on x (default √ε ≈ 1.48e-8, as scipy.optimize.brent). */
  tol?: number;
  /** Iteration cap (default 500). */
  maxIterations?: number;
}

/** Absolute tolerance floor, so a minimum at x = 0 is still found (1e-11, as scipy). */
const ZEPS = 1e-11;

/** Brent minimization of f inside a bracket (a < b < c with f(b) below both ends). */
export function brentMinimize(f: (x: number) => number, br: Bracket, opts: BrentOptions = {}): LineResult {
  const tol = opts.tol ?? 1.48e-8;
  const maxIterations = opts.maxIterations ?? 500;
  let a = Math.min(br.a, br.c);
  let b = Math.max(br.a, br.c);
  let x = br.b;
  let w = x;
  let v = x;
  let fx = br.fb;
  let fw = fx;
  let fv = fx;
  let d = 0;
  let e = 0; // the step before last
  let evaluations = 0;
  for (let iter = 0; iter < maxIterations; iter++) {
    const xm = 0.5 * (a + b);
    const tol1 = tol * Math.abs(x) + ZEPS;
    const tol2 = 2 * tol1;
    if (Math.abs(x - xm) <= tol2 - 0.5 * (b - a)) break;
    let golden = true;
    if (Math.abs(e) > tol1) {
      const r = (x - w) * (fx - fv);
      let q = (x - v) * (fx - fw);
      let p = (x - v) * q - (x - w) * r;
      q = 2 * (q - r);
      if (q > 0) p = -p;
      q = Math.abs(q);
      const eBefore = e;
      if (Math.abs(p) < Math.abs(0.5 * q * eBefore) && p > q * (a - x) && p < q * (b - x)) {
        e = d;
        d = p / q;
        const u = x + d;
        if (u - a < tol2 || b - u < tol2) d = xm >= x ? tol1 : -tol1;
        golden = false;
      }
    }
    if (golden) {
      e = x >= xm ? a - x : b - x;
      d = GOLDEN_FRACTION * e;
    }
    const u = Math.abs(d) >= tol1 ? x + d : x + (d >= 0 ? tol1 : -tol1);
    const fu = f(u);
    evaluations++;
    if (fu <= fx) {
      if (u >= x) a = x;
      else b = x;
      v = w; fv = fw;
      w = x; fw = fx;
      x = u; fx = fu;
    } else {
      if (u < x) a = u;
      else b = u;
      if (fu <= fw || w === x) {
        v = w; fv = fw;
        w = u; fw = fu;
      } else if (fu <= fv || v === x || v === w) {
        v = u; fv = fu;
      }
    }
  }
  return { step: x, value: fx, evaluations };
}
