/**
 * Curvature readout of a running session in one call: the session's weights, its fixed curvature
 * rows, the learning rate in effect at its step (schedule and warm-up applied) and, for adaptive
 * optimizers, the frozen diagonal preconditioner read from its optimizer state.
 */
import type { Objective } from '../../objective';
import type { Rng } from '../../rng';
import type { Recipe } from '../../setup';
import type { OptimizerState } from '../../state';
import { learningRate } from '../../optim/schedule';
import { plateauFactor } from '../../optim/plateau';
import type { MeasureOptions, CurvatureReport } from './summary';
import { measureCurvature, measureCurvatureWith } from './summary';
import type { DensityTraceRunner } from './parts';
import { preconditionerDiagonal, stabilityFactor, stepMetric } from './stability';

/** What {@link measureSessionCurvature} reads from a session (`core/session`'s `Session` satisfies it). */
export interface CurvatureSession {
  readonly experiment: { readonly recipe: Recipe };
  readonly parameters: Float64Array;
  readonly objective: Objective;
  readonly stepCount: number;
  optimizerState(): OptimizerState;
  curvatureRows(): Int32Array | undefined;
}

/**
 * {@link measureCurvature} at the session's current state. Rows default to the session's fixed
 * curvature rows (full batch when it has none); the stability bound uses the learning rate of the
 * next update and, for Adam / AdamW / RMSProp / Adagrad, λmax of P^{-1/2}(H + wd·I)P^{-1/2} with
 * the optimizer's current P held fixed (before the first update no bound is given).
 */
export function measureSessionCurvature(session: CurvatureSession, rng: Rng, options: Omit<MeasureOptions, 'metric' | 'lr'> = {}): CurvatureReport {
  const { w, full } = sessionInputs(session, options);
  return measureCurvature(session.objective, w, session.experiment.recipe, rng, full);
}

/**
 * {@link measureSessionCurvature} with the spectral density and the trace run by `run` (another
 * thread) while Lanczos runs here: the same numbers, in about the time of the longer half.
 */
export function measureSessionCurvatureWith(run: DensityTraceRunner, session: CurvatureSession, rng: Rng, options: Omit<MeasureOptions, 'metric' | 'lr'> = {}): Promise<CurvatureReport> {
  const { w, full } = sessionInputs(session, options);
  return measureCurvatureWith(run, session.objective, w, session.experiment.recipe, rng, full);
}

function sessionInputs(session: CurvatureSession, options: Omit<MeasureOptions, 'metric' | 'lr'>): { w: Float64Array; full: MeasureOptions } {
  const recipe = session.experiment.recipe;
  const w = Float64Array.from(session.parameters);
  const rows = options.rows ?? session.curvatureRows();
  const precond = stabilityFactor(recipe).preconditioned ? preconditionerDiagonal(recipe, session.optimizerState()) : null;
  const metric = stabilityFactor(recipe).preconditioned && precond === null ? undefined : stepMetric(recipe, session.objective.blocks, precond);
  return { w, full: { ...options, rows, metric, lr: learningRate(recipe, session.stepCount, plateauFactor(session.optimizerState())) } };
}
