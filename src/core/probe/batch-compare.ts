/**
 * Batch-size comparison: the same recipe continued from one state with different mini-batch
 * sizes, each run until it has drawn the same number of training examples, so the curves compare
 * what each batch size does with the same data budget (examples seen, not updates). Beside it the
 * simple gradient noise scale B = tr(Σ)/|G|² at the starting state (McCandlish et al., "An
 * Empirical Model of Large-Batch Training", 2018): batches well below B use each example
 * efficiently, batches well above B spend examples for little gain per update.
 *
 * Each run is a throwaway session; the branch it starts from is untouched. Verdicts (which size
 * ends lowest, which lie within the same-loss tolerance of it) are decided here.
 */
import type { Experiment } from '../setup';
import type { SessionState } from '../state';
import type { Objective } from '../objective';
import type { Rng } from '../rng';
import { Session } from '../session/live';
import { lossVerdict, type LossVerdict } from '../session/compare';
import { copyPlain } from '../plain';
import { adaptSessionState } from '../session/adapt';
import { gradientNoiseScale, type BatchVerdict, type NoiseScale } from './noise-scale';
import { THRESHOLDS } from './findings/thresholds';
import { runUnits, UnitTask } from './unit-task';

/** One batch size's run. */
export interface BatchRun {
  /** Rows per update (the data set's size at full batch). */
  batch: number;
  full: boolean;
  /** Examples drawn after each update (0 first) and the full-batch training loss there. */
  examples: number[];
  loss: number[];
  updates: number;
  /** Loss once the budget is drawn (the last point), or the last finite loss's step when the run diverged. */
  finalLoss: number;
  diverged: boolean;
  /** Against the lowest final loss among the runs (`reference` for that run). */
  verdict: LossVerdict;
  /** This batch size against the noise scale at the start. */
  noise: BatchVerdict;
}

/** Result of {@link compareBatchSizes}. */
export interface BatchComparison {
  startStep: number;
  /** Examples each run drew (at least; the last update may overshoot by less than one batch). */
  budget: number;
  runs: BatchRun[];
  noiseScale: NoiseScale;
  /** The batch size whose run ended lowest (null when all diverged). */
  best: number | null;
}

/** Options of {@link compareBatchSizes}. */
export interface BatchCompareOptions {
  /** Called after each update of each run (run index, updates done in it, updates in it); return false to stop. */
  onUpdate?: (run: number, done: number, total: number) => boolean;
  /** Rows sampled for the noise scale (default 64). */
  noiseSample?: number;
}

/** Most updates one comparison may take in all (a budget of examples with batch 1 can be long). */
export const MAX_BATCH_COMPARE_UPDATES = 200_000;

function noiseVerdict(batch: number, b: number | null): BatchVerdict {
  if (b === null || !Number.isFinite(b)) return 'undefined';
  const f = THRESHOLDS.noiseBatchFactor.value;
  return batch < b / f ? 'below-noise-scale' : batch > b * f ? 'above-noise-scale' : 'near-noise-scale';
}

/**
 * Continues `experiment` from `state` once per batch size (0 = full batch) until `budget` examples
 * are drawn. Returns null when `onUpdate` asked to stop.
 */
export function compareBatchSizes(experiment: Experiment, state: SessionState, objective: Objective, sizes: readonly number[], budget: number, rng: Rng, options: BatchCompareOptions = {}): BatchComparison | null {
  const task = batchCompareTask(experiment, state, objective, sizes, budget, rng, options);
  const onUpdate = options.onUpdate;
  return runUnits(task, onUpdate ? () => onUpdate(task.runIndex(), task.runDone(), task.runTotal()) : undefined);
}

/** The comparison as a resumable task of one update per unit over all runs (the worker runs it in slices); a stopped task's result is null. */
export function batchCompareTask(experiment: Experiment, state: SessionState, objective: Objective, sizes: readonly number[], budget: number, rng: Rng, options: Omit<BatchCompareOptions, 'onUpdate'> = {}): UnitTask<BatchComparison | null> & { runIndex(): number; runDone(): number; runTotal(): number } {
  const n = objective.rowCount;
  if (n === 0) throw new RangeError('a batch-size comparison needs data rows; this objective has none');
  if (sizes.length < 2) throw new RangeError(`compare at least two batch sizes, got ${sizes.length}`);
  if (!(budget > 0) || !Number.isInteger(budget)) throw new RangeError(`the example budget must be a positive integer, got ${budget}`);
  const batches = sizes.map((b) => {
    if (!Number.isInteger(b) || b < 0) throw new RangeError(`batch sizes must be non-negative integers (0 = full batch), got ${b}`);
    return b === 0 || b >= n ? n : b;
  });
  const updates = batches.map((b) => Math.ceil(budget / b));
  const total = updates.reduce((s, u) => s + u, 0);
  if (total > MAX_BATCH_COMPARE_UPDATES) throw new RangeError(`${total} updates in all for a budget of ${budget} examples, above the limit of ${MAX_BATCH_COMPARE_UPDATES}: use a smaller budget or larger batches`);
  const noiseScale = gradientNoiseScale(objective, state.params, rng.fork('noise'), { sample: options.noiseSample, step: state.step });
  const startLoss = objective.value(state.params);
  const runs: Omit<BatchRun, 'verdict'>[] = [];
  let r = 0;
  let k = 0;
  let session: Session | null = null;
  let examples: number[] = [];
  let loss: number[] = [];
  const close = (diverged: boolean): void => {
    const finite = loss.filter((x) => Number.isFinite(x));
    const full = sizes[r] === 0 || sizes[r] >= n;
    runs.push({ batch: batches[r], full, examples, loss, updates: examples.length - 1, finalLoss: diverged ? Infinity : finite[finite.length - 1], diverged, noise: noiseVerdict(batches[r], noiseScale.noiseScale) });
    r += 1;
    k = 0;
    session = null;
  };
  const task = new UnitTask<BatchComparison | null>(total, () => {
    if (session === null) {
      const recipe = copyPlain(experiment.recipe);
      recipe.batch = sizes[r] === 0 || sizes[r] >= n ? 'full' : batches[r];
      // as a branch at this step would: a fresh row order when leaving full batch, the epoch continued otherwise
      session = Session.restore({ seed: experiment.seed, setup: experiment.setup, recipe }, adaptSessionState(state, recipe, objective), { objective });
      examples = [0];
      loss = [startLoss];
    }
    const [rec] = (session as Session).step(1);
    k += 1;
    examples.push(k * batches[r]);
    loss.push(rec.loss);
    if (!Number.isFinite(rec.loss)) close(true); // a diverged run's remaining updates are skipped
    else if (k === updates[r]) close(false);
    return r < batches.length; // the task ends once the last run closes
  }, (stopped) => {
    if (stopped) return null;
    let best: number | null = null;
    for (let i = 0; i < runs.length; i++) if (!runs[i].diverged && (best === null || runs[i].finalLoss < runs[best].finalLoss)) best = i;
    return {
      startStep: state.step, budget, noiseScale, best: best === null ? null : runs[best].batch,
      runs: runs.map((run, i) => ({ ...run, verdict: i === best ? 'reference' : best === null ? 'diverged' : lossVerdict(run.finalLoss, runs[best as number].finalLoss) })),
    };
  });
  return Object.assign(task, { runIndex: () => Math.min(r, batches.length - 1), runDone: () => k, runTotal: () => updates[Math.min(r, batches.length - 1)] });
}
