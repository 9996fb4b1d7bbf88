/**
 * Line searches over an {@link Objective} along a direction: φ(α) = f(w + α·d) and
 * φ′(α) = ∇f(w + α·d)·d, for the optimizers and for the line-profile readout.
 */
import { dot, type Objective, type Rows } from '../../objective';
import { bracketMinimum } from './bracket';
import { brentMinimize } from './brent';
import { goldenSection } from './golden';
import type { LineResult, ValueSlope } from './types';
import { strongWolfe } from './wolfe';

/** Options of {@link minimizeAlong}. */
export interface AlongOptions {
  /** `brent` (default), `golden`, or `strong-wolfe` (an inexact step, not the minimizer). */
  method?: 'brent' | 'golden' | 'strong-wolfe';
  /** First trial step (bracket end for brent/golden, initial α for Wolfe). Default 1. */
  initialStep?: number;
  /** Relative x tolerance for brent/golden (default √ε). */
  tol?: number;
  /** Rows to evaluate on (default: all rows). */
  rows?: Rows;
  /** Scratch vectors of length P (allocated when absent). */
  scratch?: { point: Float64Array; grad: Float64Array };
}

/** The 1-D restriction φ(α) = f(w + αd) (values only), writing trial points into `point`. */
export function lineFunction(objective: Objective, w: Float64Array, d: Float64Array, point: Float64Array, rows?: Rows): (alpha: number) => number {
  return (alpha: number) => {
    for (let i = 0; i < w.length; i++) point[i] = w[i] + alpha * d[i];
    return objective.value(point, rows);
  };
}

/** φ(α) and φ′(α) = ∇f(w + αd)·d, writing into `point` and `grad`. */
export function lineFunctionWithSlope(objective: Objective, w: Float64Array, d: Float64Array, point: Float64Array, grad: Float64Array, rows?: Rows): (alpha: number) => ValueSlope {
  return (alpha: number) => {
    for (let i = 0; i < w.length; i++) point[i] = w[i] + alpha * d[i];
    const value = objective.gradient(point, grad, rows);
    return { value, slope: dot(grad, d) };
  };
}

/**
 * Minimizes f along d from w: bracket from (0, initialStep) by downhill expansion, then Brent
 * or golden section; or a strong-Wolfe step. Evaluations include the bracketing.
 */
export function minimizeAlong(objective: Objective, w: Float64Array, direction: Float64Array, opts: AlongOptions = {}): LineResult {
  const p = objective.parameterCount;
  if (w.length !== p || direction.length !== p) throw new Error(`minimizeAlong needs w and direction of length ${p}, got ${w.length} and ${direction.length}`);
  const point = opts.scratch?.point ?? new Float64Array(p);
  const grad = opts.scratch?.grad ?? new Float64Array(p);
  const t0 = opts.initialStep ?? 1;
  const method = opts.method ?? 'brent';
  switch (method) {
    case 'brent':
    case 'golden': {
      const f = lineFunction(objective, w, direction, point, opts.rows);
      const br = bracketMinimum(f, 0, t0);
      const res = method === 'brent' ? brentMinimize(f, br, { tol: opts.tol }) : goldenSection(f, br, { tol: opts.tol });
      return { step: res.step, value: res.value, evaluations: res.evaluations + br.evaluations };
    }
    case 'strong-wolfe': {
      const phi = lineFunctionWithSlope(objective, w, direction, point, grad, opts.rows);
      const f0 = objective.gradient(w, grad, opts.rows);
      const g0 = dot(grad, direction);
      const res = strongWolfe(phi, f0, g0, t0);
      return { step: res.step, value: res.value, evaluations: res.evaluations + 1 };
    }
    default: {
      const never: never = method;
      throw new Error(`unknown line-search method '${String(never)}'`);
    }
  }
}
