/**
 * The line readout: the loss along the update the optimizer takes from the current weights and
 * along the top Hessian eigenvector, each beside its local quadratic model
 * f(w) + t·gᵀu + ½t²·uᵀHu (Nocedal & Wright, Numerical Optimization, 2nd ed., 2006, §2.1), with
 * the step actually taken and Brent's minimum along the line (Brent 1973, ch. 5; bracket as
 * Numerical Recipes' mnbrak) marked.
 *
 * Along the update the offset t counts multiples of the step: t = 1 is the step taken, and Brent's
 * t* says how many such steps would reach the lowest loss on that line. Along the eigenvector t is
 * a distance in parameter space, and the step taken shows as its component Δw·u.
 */
import type { Objective, Rows } from '../objective';
import { dot } from '../objective';
import { lineProfile } from './curvature/profile';
import { bracketMinimum } from '../optim/linesearch/bracket';
import { brentMinimize } from '../optim/linesearch/brent';

/** Which line a curve follows. */
export type LineKind = 'update' | 'eigenvector';

/** Brent's minimum along one line, or why there is none. */
export interface LineMinimum {
  /** Offset of the minimum (same units as the curve's t), or null when none was bracketed. */
  t: number | null;
  loss: number | null;
  evaluations: number;
  /** Why no minimum: the loss falls without bound along the line within the search, or is not finite. */
  note?: string;
}

/** The loss along one line. */
export interface LineCurve {
  kind: LineKind;
  /** Offsets: multiples of the step (update) or parameter distance (eigenvector). */
  t: number[];
  loss: number[];
  /** The local quadratic model at the same offsets. */
  quadratic: number[];
  /** dφ/dt and d²φ/dt² at t = 0 (φ(t) = f(w + t·direction)). */
  slope: number;
  curvature: number;
  /** Minimum of the quadratic model (−slope/curvature), null when the curvature is not positive. */
  quadraticMinimum: number | null;
  /** Where the step actually taken lies on this line (1 along the update; Δw·u along the eigenvector). */
  stepAt: number;
  /** Brent's minimum along the line. */
  minimum: LineMinimum;
  /** Length of one unit of t in parameter space (‖Δw‖ along the update, 1 along the eigenvector). */
  unit: number;
}

/** Options of {@link lineCurve}. */
export interface LineOptions {
  rows?: Rows;
  /** Grid points (default 41). */
  points?: number;
  /** Grid range (default −0.5 … 2.5 steps along the update; ±2·max(‖Δw‖, |Δw·u|) along the eigenvector, where {@link lineReadout} never passes these). */
  from?: number;
  to?: number;
  /** Relative tolerance of Brent's method (default 1e-8). */
  tol?: number;
}

/**
 * The loss along w + t·direction (t in units of `direction`'s own length when `kind` is
 * `update`, so t = 1 is the whole step; `direction` is normalized when `kind` is `eigenvector`).
 * @param step the step actually taken from w (Δw), to place it on the line
 */
export function lineCurve(objective: Objective, w: Float64Array, kind: LineKind, direction: Float64Array, step: Float64Array, options: LineOptions = {}): LineCurve {
  const dn = Math.sqrt(dot(direction, direction));
  if (!(dn > 0) || !Number.isFinite(dn)) throw new RangeError(`the ${kind} direction is zero or not finite: there is no line to follow`);
  const unit = kind === 'update' ? dn : 1;
  const u = Float64Array.from(direction, (x) => x / dn);
  const stepAt = kind === 'update' ? 1 : dot(step, u);
  const spread = Math.max(Math.sqrt(dot(step, step)), Math.abs(stepAt));
  const from = options.from ?? (kind === 'update' ? -0.5 : -2 * spread);
  const to = options.to ?? (kind === 'update' ? 2.5 : 2 * spread);
  const points = options.points ?? 41;
  if (!Number.isInteger(points) || points < 3) throw new RangeError(`points must be an integer of at least 3, got ${points}`);
  if (!(to > from)) throw new RangeError(`the line's range must grow: from ${from} to ${to}`);
  const t = Array.from({ length: points }, (_, i) => from + ((to - from) * i) / (points - 1));
  const profile = lineProfile(objective, w, u, { rows: options.rows, offsets: t.map((x) => x * unit) });
  // φ(t) = f(w + t·unit·u): chain rule scales the slope by unit and the curvature by unit².
  const slope = profile.slope * unit;
  const curvature = profile.curvature * unit * unit;
  const x = new Float64Array(w.length);
  const phi = (s: number): number => {
    for (let i = 0; i < w.length; i++) x[i] = w[i] + s * unit * u[i];
    return objective.value(x, options.rows);
  };
  return {
    kind, t, loss: Array.from(profile.loss), quadratic: Array.from(profile.quadratic), slope, curvature,
    quadraticMinimum: curvature > 0 ? -slope / curvature : null, stepAt, minimum: minimumAlong(phi, kind === 'update' ? 1 : Math.max(spread, 1e-8), options.tol ?? 1e-8), unit,
  };
}

/** Brent's minimum of φ from a bracket grown from (0, scale); a failed bracket is reported, not thrown. */
function minimumAlong(phi: (t: number) => number, scale: number, tol: number): LineMinimum {
  let counted = 0;
  const f = (t: number): number => { counted++; const v = phi(t); return Number.isFinite(v) ? v : Infinity; };
  try {
    const br = bracketMinimum(f, 0, scale, { maxEvaluations: 200 });
    if (!Number.isFinite(br.fb)) return { t: null, loss: null, evaluations: counted, note: 'the loss is not finite along this line' };
    const r = brentMinimize(f, br, { tol });
    return { t: r.step, loss: r.value, evaluations: counted };
  } catch {
    return { t: null, loss: null, evaluations: counted, note: 'no minimum within 200 evaluations: the loss keeps falling along this line' };
  }
}

/** The line readout at one step. */
export interface LineReadout {
  step: number;
  loss: number;
  update: LineCurve;
  /** Absent when the Hessian has no positive eigenvalue to follow or the caller gave none. */
  eigenvector?: LineCurve & { eigenvalue: number };
}

/**
 * Both lines at `w`: along the step Δw the optimizer takes next, and along the top eigenvector
 * `top` (unit, with its eigenvalue) when given. `options.from`/`to` set the update line's range.
 */
export function lineReadout(objective: Objective, w: Float64Array, stepIndex: number, update: Float64Array, top: { value: number; vector: Float64Array } | null, options: LineOptions = {}): LineReadout {
  const loss = objective.value(w, options.rows);
  const out: LineReadout = { step: stepIndex, loss, update: lineCurve(objective, w, 'update', update, update, options) };
  // from/to are multiples of the step: they shape the update line only (the eigenvector line's t is a distance)
  if (top !== null) out.eigenvector = { ...lineCurve(objective, w, 'eigenvector', top.vector, update, { ...options, from: undefined, to: undefined }), eigenvalue: top.value };
  return out;
}
