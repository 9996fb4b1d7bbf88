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
  const n = objective.rowCount;
  if (n === 0) throw new RangeError('a batch-size comparison needs data rows; this objective has none');
  if (sizes.length < 2) throw new RangeError(`compare at least two batch sizes, got ${sizes.length}`);
  if (!(budget > 0) || !Number.isInteger(budget)) throw new RangeError(`the example budget must be a positive integer, got ${budget}`);
  const batches = sizes.map((b) => {
    if (!Number.isInteger(b) || b < 0) throw new RangeError(`batch sizes must be non-negative integers (0 = full batch), got ${b}`);
    return b === 0 || b >= n ? n : b;
  });
  const total = batches.reduce((s, b) => s + Math.ceil(budget / b), 0);
  if (total > MAX_BATCH_COMPARE_UPDATES) throw new RangeError(`${total} updates in all for a budget of ${budget} examples, above the limit of ${MAX_BATCH_COMPARE_UPDATES}: use a smaller budget or larger batches`);
  const noiseScale = gradientNoiseScale(objective, state.params, rng.fork('noise'), { sample: options.noiseSample, step: state.step });
  const startLoss = objective.value(state.params);
  const runs: Omit<BatchRun, 'verdict'>[] = [];
  for (let r = 0; r < batches.length; r++) {
    const batch = batches[r];
    const full = sizes[r] === 0 || sizes[r] >= n;
    const recipe = copyPlain(experiment.recipe);
    recipe.batch = full ? 'full' : batch;
    // as a branch at this step would: a fresh row order when leaving full batch, the epoch continued otherwise
    const session = Session.restore({ seed: experiment.seed, setup: experiment.setup, recipe }, adaptSessionState(state, recipe, objective), { objective });
    const updates = Math.ceil(budget / batch);
    const examples = [0];
    const loss = [startLoss];
    let diverged = false;
    for (let k = 1; k <= updates; k++) {
      const [rec] = session.step(1);
      examples.push(k * batch);
      loss.push(rec.loss);
      if (!Number.isFinite(rec.loss)) { diverged = true; break; }
      if (options.onUpdate && !options.onUpdate(r, k, updates)) return null;
    }
    const finite = loss.filter((x) => Number.isFinite(x));
    runs.push({ batch, full, examples, loss, updates: examples.length - 1, finalLoss: diverged ? Infinity : finite[finite.length - 1], diverged, noise: noiseVerdict(batch, noiseScale.noiseScale) });
  }
  let best: number | null = null;
  for (let r = 0; r < runs.length; r++) if (!runs[r].diverged && (best === null || runs[r].finalLoss < runs[best].finalLoss)) best = r;
  return {
    startStep: state.step, budget, noiseScale, best: best === null ? null : runs[best].batch,
    runs: runs.map((run, r) => ({ ...run, verdict: r === best ? 'reference' : best === null ? 'diverged' : lossVerdict(run.finalLoss, runs[best].finalLoss) })),
  };
}
