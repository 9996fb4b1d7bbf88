/**
 * The contract every optimizer family implements (optax-style `init` / `update` pairs over an
 * explicit, serializable {@link OptimizerState}).
 *
 * Sign convention, in one place: `update` writes an *ascent-form* direction `u` (a
 * preconditioned gradient, pointing uphill) and a non-negative `stepSize` s; the session turns it
 * into the displacement Δw = −s·(layer scale)·u with {@link descend} and applies it with
 * {@link applyUpdates}. No family changes parameters itself.
 */
import type { Objective, Rows } from '../objective';
import type { Recipe } from '../setup';
import type { OptimizerState } from '../state';

/** Per-session scratch vectors, allocated once per name so hot loops allocate nothing. */
export class Workspace {
  private readonly vectors = new Map<string, Float64Array>();

  /** @param length Length of every vector handed out (the parameter count P). */
  constructor(readonly length: number) {}

  /** The scratch vector called `name` (contents left from its previous use), default length P. */
  vector(name: string, length = this.length): Float64Array {
    let v = this.vectors.get(name);
    if (v === undefined || v.length !== length) {
      v = new Float64Array(length);
      this.vectors.set(name, v);
    }
    return v;
  }
}

/** Everything an update may consult besides gradient, state and parameters. */
export interface OptimizerContext {
  /** Learning rate in effect for this update (schedule and warm-up applied). */
  readonly lr: number;
  /** The recipe (hyper-parameters). */
  readonly recipe: Recipe;
  /**
   * The objective the update may evaluate (line searches, Hessian products). It already
   * includes the recipe's weight decay as ½·λ‖w‖² for the batch families, so its gradient
   * matches the `grad` handed to `update`.
   */
  readonly objective: Objective;
  /** Rows of this step's (mini-)batch; `undefined` = full batch. */
  readonly rows: Rows;
  /** Rows for curvature products (Newton, Gauss-Newton). */
  readonly curvatureRows: Rows;
  /** Objective value at `params` on `rows` (already computed together with `grad`). */
  readonly loss: number;
  /** Scratch vectors of length P. */
  readonly work: Workspace;
  /** Entries weight decay applies to (1) or not (0); null = all (see `gradient.ts`, decayMask). */
  readonly decayMask: Uint8Array | null;
  /**
   * Objective evaluations the update used beyond the gradient the session computed; the
   * session sets it to 0 before each update and families add to it (line searches, products).
   */
  extraEvaluations: number;
}

/** One optimizer family: `init` builds the state, `update` advances it in place and writes `u`. */
export interface OptimizerFamily {
  /**
   * First-order families get the clipped gradient plus coupled weight decay λw, and their
   * displacement is multiplied by the per-layer `lrScale`. Batch families (L-BFGS, CG, Newton,
   * Gauss-Newton, mini-batch L-BFGS) minimize f + ½λ‖w‖² through line searches instead:
   * no clipping, no per-layer scaling (both would break their curvature model).
   */
  readonly firstOrder: boolean;
  /** Whether the family adds weight decay itself (decoupled, AdamW) instead of to the gradient. */
  readonly decoupledDecay: boolean;
  /** A fresh state for P parameters (all buffers zero, t = 0). */
  init(parameterCount: number, recipe: Recipe): OptimizerState;
  /**
   * Writes the ascent-form direction u into `out` (length P), advances `state` in place
   * (including `state.t`) and returns the step size s ≥ 0 of Δw = −s·u (a plain number, so
   * the hot path allocates nothing). `grad` has clipping and coupled weight decay applied.
   */
  update(grad: Float64Array, state: OptimizerState, params: Float64Array, ctx: OptimizerContext, out: Float64Array): number;
}

/**
 * Turns an ascent-form direction into the displacement, in place: u ← −s·scale ⊙ u.
 * This is the single place where the descent sign is applied.
 * @param scales per-parameter learning-rate multipliers, or null for all ones.
 */
export function descend(u: Float64Array, stepSize: number, scales: Float64Array | null): void {
  const a = -stepSize;
  if (scales === null) {
    for (let i = 0; i < u.length; i++) u[i] = a * u[i];
  } else {
    for (let i = 0; i < u.length; i++) u[i] = a * scales[i] * u[i];
  }
}

/** The only place parameters change: w ← w + Δw (optax `apply_updates`). */
export function applyUpdates(params: Float64Array, updates: Float64Array): void {
  for (let i = 0; i < params.length; i++) params[i] += updates[i];
}
