/**
 * Learning-rate range test (Smith, "Cyclical Learning Rates for Training Neural Networks", WACV
 * 2017, §3.3) run as a throwaway fork of the current state: the recipe continues from the
 * checkpoint for `steps` updates while the learning rate grows geometrically from `from` to `to`
 * (η_k = from·(to/from)^{k/(steps−1)}, schedule and warm-up set aside), and the full-batch loss
 * after each update is recorded against the η that made it. The fork is discarded; the branch
 * is untouched.
 *
 * Reading it (Smith §3.3, from memory: the base rate where the loss starts to fall, the maximum
 * where it stops falling or turns ragged): `low` is the first η after which the loss lies 1% below
 * its start, `high` the η of the lowest loss before the run blew up. The stability limit of the
 * recipe at the current sharpness (2/λmax for plain gradient descent) is given beside it by the
 * caller, since on a quadratic the loss turns up exactly where η passes it.
 */
import type { Experiment } from '../setup';
import type { SessionState } from '../state';
import type { Objective } from '../objective';
import { Session } from '../session/live';
import { copyPlain } from '../plain';
import { adaptSessionState } from '../session/adapt';
import { runUnits, UnitTask } from './unit-task';

/** Why the range test ended. */
export type RangeTestEnd = 'completed' | 'diverged' | 'stopped';

/** Options of {@link rangeTest}. */
export interface RangeTestOptions {
  /** Smallest and largest learning rate (default 1e-5 and 10). */
  from?: number;
  to?: number;
  /** Updates, one per learning rate (default 40). */
  steps?: number;
  /** End the run once the loss exceeds this multiple of its starting value (default 10) or is not finite. */
  blowUp?: number;
  /** Called after each update; return false to stop. */
  onStep?: (done: number, total: number) => boolean;
}

/** Result of {@link rangeTest}. */
export interface RangeTestResult {
  /** Step of the checkpoint the fork started from, and its full-batch loss. */
  startStep: number;
  startLoss: number;
  /** η of each update made, and the full-batch loss after it (same length). */
  lr: number[];
  loss: number[];
  /** The grid the run would have walked in full. */
  grid: number[];
  end: RangeTestEnd;
  /** The suggested range (module comment), or null when the loss never fell 1% below its start. */
  suggested: { low: number; high: number } | null;
}

/** Relative fall of the loss that counts as "learning has started" (module comment). */
export const RANGE_TEST_START_FALL = 0.01;

/** The geometric grid from·(to/from)^{k/(n−1)}, k = 0 … n − 1 (multiplications only: the same bits in every engine). */
export function geometricGrid(from: number, to: number, n: number): number[] {
  if (!(from > 0) || !(to > from) || !Number.isFinite(to)) throw new RangeError(`the learning-rate range must satisfy 0 < from < to, got ${from} … ${to}`);
  if (!Number.isInteger(n) || n < 2 || n > 1000) throw new RangeError(`steps must be an integer from 2 to 1000, got ${n}`);
  const ratio = Math.exp(Math.log(to / from) / (n - 1));
  const out = [from];
  for (let k = 1; k < n - 1; k++) out.push(out[k - 1] * ratio);
  out.push(to);
  return out;
}

/** The suggested range of a finished run (module comment). */
export function suggestRange(startLoss: number, lr: readonly number[], loss: readonly number[]): { low: number; high: number } | null {
  let lowIdx = -1;
  let best = -1;
  for (let i = 0; i < loss.length; i++) {
    if (!Number.isFinite(loss[i])) break;
    if (lowIdx < 0 && loss[i] <= startLoss * (1 - RANGE_TEST_START_FALL)) lowIdx = i;
    if (best < 0 || loss[i] < loss[best]) best = i;
  }
  if (lowIdx < 0 || best < 0) return null;
  return { low: lr[lowIdx], high: lr[Math.max(best, lowIdx)] };
}

/**
 * Runs the range test from `state` (a checkpoint of `experiment`'s branch) on a fork that shares
 * `objective` and is then dropped.
 */
export function rangeTest(experiment: Experiment, state: SessionState, objective: Objective, options: RangeTestOptions = {}): RangeTestResult {
  return runUnits(rangeTestTask(experiment, state, objective, options), options.onStep);
}

/** The range test as a resumable task of one update per rate (the worker runs it in slices; Stop ends it with what was measured). */
export function rangeTestTask(experiment: Experiment, state: SessionState, objective: Objective, options: Omit<RangeTestOptions, 'onStep'> = {}): UnitTask<RangeTestResult> {
  const grid = geometricGrid(options.from ?? 1e-5, options.to ?? 10, options.steps ?? 40);
  const blowUp = options.blowUp ?? 10;
  const recipe = copyPlain(experiment.recipe);
  recipe.warmup = 0;
  if (recipe.schedule.kind !== 'plateau') recipe.schedule = { kind: 'constant' }; // a plateau's multiplier lives in the optimizer state and stays
  let current = adaptSessionState(state, recipe, objective);
  const startLoss = objective.value(state.params);
  const lr: number[] = [];
  const loss: number[] = [];
  let diverged = false;
  return new UnitTask(grid.length, (k) => {
    recipe.lr = grid[k];
    const fork = Session.restore({ seed: experiment.seed, setup: experiment.setup, recipe }, current, { objective });
    const [rec] = fork.step(1);
    lr.push(grid[k]);
    loss.push(rec.loss);
    current = fork.state();
    diverged = !Number.isFinite(rec.loss) || rec.loss > blowUp * startLoss;
    return !diverged;
  }, (stopped) => ({ startStep: state.step, startLoss, lr: lr.slice(), loss: loss.slice(), grid, end: stopped ? 'stopped' : diverged ? 'diverged' : 'completed', suggested: suggestRange(startLoss, lr, loss) }));
}
