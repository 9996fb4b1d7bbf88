/**
 * The optimizer state of a whole recipe: the family's own state (its `init`) plus the state of
 * the stateful transforms chained with it — today the reduce-on-plateau schedule, whose scalars
 * (`plateau.ts`) ride in the same record so checkpoints, fingerprints and the ledger carry them.
 */
import type { Recipe } from '../setup';
import type { OptimizerState } from '../state';
import { initPlateau } from './plateau';
import { familyFor } from './registry';

/** A fresh state for `recipe` over P parameters: family buffers at zero, transforms at their start. */
export function initOptimizerState(recipe: Recipe, parameterCount: number): OptimizerState {
  const state = familyFor(recipe.optimizer).init(parameterCount, recipe);
  if (recipe.schedule.kind === 'plateau') initPlateau(state);
  return state;
}
