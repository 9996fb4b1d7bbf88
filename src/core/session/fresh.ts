/**
 * The state a session starts from, computed without building the objective (no data copies,
 * no network workspaces): what a stored step-0 state must equal. `Session.create` draws the
 * same values in the same order (`test/unit/session/fresh.test.ts` compares the two).
 */
import { initialParameters } from '../assemble';
import { initOptimizerState } from '../optim/chain';
import { Rng } from '../rng';
import type { Experiment, Setup } from '../setup';
import type { SessionState } from '../state';
import { effectiveBatch } from './adapt';
import { drawOrder } from './batches';

/** Training rows of a setup (0 for analytic objectives), as the objective counts them. */
export function rowCountOf(setup: Setup): number {
  return setup.model.kind === 'network' && setup.data ? setup.data.rows : 0;
}

/**
 * The step-0 state of `experiment`: w0 from fork('init') of the seed, a fresh optimizer state,
 * the 'batches' generator after drawing the first epoch's order (mini-batches only).
 */
export function freshState(experiment: Experiment): SessionState {
  const params = initialParameters(experiment.setup, Rng.fromSeed(experiment.seed).fork('init'));
  const n = rowCountOf(experiment.setup);
  const rng = Rng.fromSeed(experiment.seed).fork('batches');
  const order = effectiveBatch(experiment.recipe, n) > 0 ? drawOrder(rng, n, null) : null;
  return { step: 0, params, optimizer: initOptimizerState(experiment.recipe, params.length), rng: rng.state(), epoch: 0, cursor: 0, order };
}
