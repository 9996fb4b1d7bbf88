/**
 * Line profile of the loss along a direction (typically the top Hessian eigenvector):
 * f(w + t·u) for t on a grid, beside the quadratic model f(w) + t·gᵀu + ½t²·uᵀHu
 * (second-order Taylor expansion; Nocedal & Wright 2006, §2.1), so the readout shows where the
 * quadratic picture of the step-size limit holds and where it breaks.
 */
import type { Objective, Rows } from '../../objective';
import { dot } from '../../objective';

/** Options of {@link lineProfile}. */
export interface LineProfileOptions {
  rows?: Rows;
  /** Explicit offsets t (overrides `from`/`to`/`points`). */
  offsets?: readonly number[];
  /** Grid range and size (defaults −1, 1, 41). */
  from?: number;
  to?: number;
  points?: number;
}

/** The loss along one direction. */
export interface LineProfile {
  /** Offsets t (distance along the unit direction). */
  readonly t: Float64Array;
  /** f(w + t·u). */
  readonly loss: Float64Array;
  /** f(w) + t·slope + ½t²·curvature. */
  readonly quadratic: Float64Array;
  /** gᵀu (directional derivative). */
  readonly slope: number;
  /** uᵀHu (directional curvature; equals λ when u is an eigenvector). */
  readonly curvature: number;
  /** The unit direction used. */
  readonly direction: Float64Array;
}

/**
 * f(w + t·u) on a grid of t with u = direction/‖direction‖, plus the quadratic model from the exact
 * gradient and Hessian-vector product at w.
 */
export function lineProfile(objective: Objective, w: Float64Array, direction: Float64Array, options: LineProfileOptions = {}): LineProfile {
  const p = objective.parameterCount;
  if (direction.length !== p) throw new RangeError(`direction has ${direction.length} entries, the objective expects ${p}`);
  const nrm = Math.sqrt(dot(direction, direction));
  if (!(nrm > 0) || !Number.isFinite(nrm)) throw new RangeError('direction must be non-zero and finite');
  const u = Float64Array.from(direction, (x) => x / nrm);
  let t: Float64Array;
  if (options.offsets !== undefined) {
    t = Float64Array.from(options.offsets);
  } else {
    const from = options.from ?? -1;
    const to = options.to ?? 1;
    const points = options.points ?? 41;
    if (!Number.isInteger(points) || points < 2) throw new RangeError(`points must be an integer >= 2, got ${points}`);
    t = Float64Array.from({ length: points }, (_, i) => from + ((to - from) * i) / (points - 1));
  }
  const g = new Float64Array(p);
  const hu = new Float64Array(p);
  const f0 = objective.gradient(w, g, options.rows);
  objective.hvp(w, u, hu, options.rows);
  const slope = dot(g, u);
  const curvature = dot(u, hu);
  const x = new Float64Array(p);
  const loss = Float64Array.from(t, (ti) => {
    for (let i = 0; i < p; i++) x[i] = w[i] + ti * u[i];
    return objective.value(x, options.rows);
  });
  const quadratic = Float64Array.from(t, (ti) => f0 + ti * slope + 0.5 * ti * ti * curvature);
  return { t, loss, quadratic, slope, curvature, direction: u };
}
