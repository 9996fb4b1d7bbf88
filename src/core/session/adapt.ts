/**
 * Carrying a session state over to a changed recipe (what a branch does at its fork point).
 *
 * - Optimizer: a different optimizer kind starts from a fresh state (its `init`); the same
 *   kind keeps every buffer whose name and length the new recipe's fresh state also has, the
 *   step counter t (so Adam's bias correction continues) and the scalars the fresh state
 *   defines. Buffers the new recipe does not need are dropped, new ones start at zero (e.g.
 *   turning SGD momentum on starts with v = 0; changing L-BFGS `history` clears the history).
 *   A reduce-on-plateau schedule keeps its multiplier and counters when the branch keeps it, and
 *   starts afresh (multiplier 1) when the branch introduces it.
 * - Batches: the generator state is kept. Going to full batch drops the row order; going to
 *   mini-batches from full batch draws a fresh permutation from the kept generator; a changed
 *   batch size continues the epoch in progress from its cursor.
 * - Weights and step count are kept.
 */
import type { Objective } from '../objective';
import { Rng } from '../rng';
import type { Recipe } from '../setup';
import type { OptimizerState, SessionState } from '../state';
import { initOptimizerState } from '../optim/chain';
import { drawOrder } from './batches';
import { copySessionState } from './state-data';

/** Rows per step for a recipe on `rowCount` rows; 0 means full batch. */
export function effectiveBatch(recipe: Recipe, rowCount: number): number {
  return recipe.batch === 'full' || rowCount === 0 || recipe.batch >= rowCount ? 0 : recipe.batch;
}

/** The optimizer state for `to`, carried over from `from` as described in the module comment. */
export function adaptOptimizerState(old: OptimizerState, to: Recipe, parameterCount: number): OptimizerState {
  const fresh = initOptimizerState(to, parameterCount);
  if (old.kind !== to.optimizer) return fresh;
  for (const k of Object.keys(fresh.buffers)) {
    const b = old.buffers[k];
    if (b !== undefined && b.length === fresh.buffers[k].length) fresh.buffers[k] = Float64Array.from(b);
  }
  for (const k of Object.keys(fresh.scalars)) {
    const v = old.scalars[k];
    if (v !== undefined) fresh.scalars[k] = v;
  }
  if (to.optimizer === 'lbfgs' && fresh.buffers.s.length !== (old.buffers.s?.length ?? -1)) {
    // history length changed: the ring-buffer bookkeeping no longer applies
    fresh.scalars.count = 0;
    fresh.scalars.start = 0;
    fresh.scalars.hDiag = 1;
    fresh.t = 0;
    return fresh;
  }
  fresh.t = old.t;
  return fresh;
}

/** A deep-copied state ready for `Session.restore` under recipe `to` (see the module comment). */
export function adaptSessionState(state: SessionState, to: Recipe, objective: Objective): SessionState {
  const s = copySessionState(state);
  s.optimizer = adaptOptimizerState(state.optimizer, to, objective.parameterCount);
  const n = objective.rowCount;
  if (effectiveBatch(to, n) === 0) {
    s.order = null;
    s.cursor = 0;
  } else if (s.order === null || s.order.length !== n) {
    const rng = Rng.fromState(s.rng);
    s.order = drawOrder(rng, n, null);
    s.cursor = 0;
    s.rng = rng.state();
  }
  return s;
}
