/**
 * What each optimizer family keeps in its {@link OptimizerState}, declared once per family: the
 * buffers it always has, the buffers a recipe option adds, and its scalars. A family reads its
 * state through {@link stateOf}, which checks the kind and the declared entries once per update
 * and hands back the same object typed with those names — so a misspelt buffer is a compile
 * error, not a `undefined` at run time, and the ledger and the checks of a restored state have
 * one list to hold a state against.
 */
import type { OptimizerName } from '../setup';
import type { OptimizerState } from '../state';

/** The entries of one family's state. */
export interface StateLayout<B extends string, O extends string, S extends string> {
  /** The state kinds this layout reads (Adam and AdamW share one). */
  readonly kinds: readonly OptimizerName[];
  /** Buffers every state of these kinds has. */
  readonly buffers: readonly B[];
  /** Buffers present only with some recipe options (momentum, AMSGrad, centered). */
  readonly optional: readonly O[];
  /** Scalars every state of these kinds has. */
  readonly scalars: readonly S[];
}

/** A state read through a layout: its buffers and scalars under their declared names. */
export type TypedState<B extends string, O extends string, S extends string> = OptimizerState & {
  readonly buffers: Readonly<Record<B, Float64Array>> & Readonly<Partial<Record<O, Float64Array>>>;
  readonly scalars: Record<S, number>;
};

/** Declares a layout (keeps the literal names as types). */
export function stateLayout<B extends string = never, O extends string = never, S extends string = never>(layout: StateLayout<B, O, S>): StateLayout<B, O, S> {
  return layout;
}

/**
 * `state` typed by `layout`, after checking its kind and that every declared buffer and scalar
 * is there (own properties; an optional buffer is checked where the family asks for it).
 * @throws Error naming the kind or the missing entry, when a state of another family is handed in.
 */
export function stateOf<B extends string, O extends string, S extends string>(layout: StateLayout<B, O, S>, state: OptimizerState): TypedState<B, O, S> {
  if (!layout.kinds.includes(state.kind)) throw new Error(`optimizer state of kind '${state.kind}' handed to ${layout.kinds.join(' / ')}`);
  for (const b of layout.buffers) {
    if (!Object.prototype.hasOwnProperty.call(state.buffers, b)) throw new Error(`optimizer state of kind '${state.kind}' has no buffer '${b}'`);
  }
  for (const s of layout.scalars) {
    if (!Object.prototype.hasOwnProperty.call(state.scalars, s)) throw new Error(`optimizer state of kind '${state.kind}' has no scalar '${s}'`);
  }
  return state as TypedState<B, O, S>;
}

/** An optional buffer a recipe option requires, failing loudly when the state lacks it. */
export function required(buffer: Float64Array | undefined, kind: string, name: string): Float64Array {
  if (buffer === undefined) throw new Error(`optimizer state of kind '${kind}' has no buffer '${name}' (the recipe needs it)`);
  return buffer;
}

/** SGD: the velocity exists with momentum. */
export const SGD_STATE = stateLayout({ kinds: ['sgd'], buffers: [], optional: ['velocity'], scalars: [] });
/** Adagrad: the running sum of squared gradients. */
export const ADAGRAD_STATE = stateLayout({ kinds: ['adagrad'], buffers: ['sum'], optional: [], scalars: [] });
/** RMSProp: the squared average; the gradient average when centered, the momentum buffer with momentum. */
export const RMSPROP_STATE = stateLayout({ kinds: ['rmsprop'], buffers: ['squareAvg'], optional: ['gradAvg', 'momentum'], scalars: [] });
/** Adam and AdamW: first and second moments; the running maximum with AMSGrad. */
export const ADAM_STATE = stateLayout({ kinds: ['adam', 'adamw'], buffers: ['m', 'v'], optional: ['vMax'], scalars: [] });
/** L-BFGS: the ring of curvature pairs (history × P), their 1/yᵀs, the previous gradient and the direction. */
export const LBFGS_STATE = stateLayout({ kinds: ['lbfgs'], buffers: ['s', 'y', 'rho', 'prevGrad', 'dir'], optional: [], scalars: ['count', 'start', 'hDiag', 'stepLength'] });
/** Mini-batch L-BFGS: only the step counter (the inner solve's history is scratch). */
export const MINIBATCH_LBFGS_STATE = stateLayout({ kinds: ['minibatch-lbfgs'], buffers: [], optional: [], scalars: [] });
/** Nonlinear conjugate gradient: previous gradient, direction and the restart bookkeeping. */
export const CG_STATE = stateLayout({ kinds: ['cg'], buffers: ['prevGrad', 'dir'], optional: [], scalars: ['sinceRestart', 'stepLength', 'prevSlope', 'prevGG'] });
/** Newton and Gauss-Newton: the Levenberg–Marquardt damping and the last step length. */
export const NEWTON_STATE = stateLayout({ kinds: ['newton', 'gauss-newton'], buffers: [], optional: [], scalars: ['lambda', 'stepLength'] });

/** The layout of every state kind (plateau scalars, `plateau.*`, ride along with any of them). */
export const STATE_LAYOUTS: Readonly<Record<OptimizerName, StateLayout<string, string, string>>> = {
  sgd: SGD_STATE,
  adagrad: ADAGRAD_STATE,
  rmsprop: RMSPROP_STATE,
  adam: ADAM_STATE,
  adamw: ADAM_STATE,
  lbfgs: LBFGS_STATE,
  'minibatch-lbfgs': MINIBATCH_LBFGS_STATE,
  cg: CG_STATE,
  newton: NEWTON_STATE,
  'gauss-newton': NEWTON_STATE
};

/** The typed state a layout reads. */
export type StateOf<L> = L extends StateLayout<infer B, infer O, infer S> ? TypedState<B, O, S> : never;
