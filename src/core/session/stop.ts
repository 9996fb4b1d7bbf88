/** Stop conditions for {@link Session.runUntil}. */
import type { StepRecord } from '../state';

/**
 * When a run stops: full-batch loss below a value, ‖g‖ of the last update below a value,
 * divergence (loss above `factor` × the loss at the start of the run, default 1e3, or
 * non-finite), or a number of updates.
 */
export type StopCondition =
  | { kind: 'loss-below'; value: number }
  | { kind: 'grad-norm-below'; value: number }
  | { kind: 'diverged'; factor?: number }
  | { kind: 'steps'; count: number };

/** Default divergence factor: the loss grew a thousandfold (common practice). */
export const DEFAULT_DIVERGENCE_FACTOR = 1e3;

/**
 * The reason to stop after `rec`, or null to go on. A non-finite loss or parameter always
 * stops with 'diverged', whatever the condition.
 */
export function evaluateStop(cond: StopCondition, rec: StepRecord, done: number, startLoss: number, params: Float64Array): 'condition' | 'diverged' | null {
  if (!Number.isFinite(rec.loss) || !allFinite(params)) return 'diverged';
  switch (cond.kind) {
    case 'loss-below':
      return rec.loss < cond.value ? 'condition' : null;
    case 'grad-norm-below':
      return rec.gradNorm < cond.value ? 'condition' : null;
    case 'diverged':
      return rec.loss > (cond.factor ?? DEFAULT_DIVERGENCE_FACTOR) * Math.abs(startLoss) ? 'diverged' : null;
    case 'steps':
      return done >= cond.count ? 'condition' : null;
    default: {
      const never: never = cond;
      throw new Error(`unknown stop condition ${JSON.stringify(never)}`);
    }
  }
}

function allFinite(a: Float64Array): boolean {
  for (let i = 0; i < a.length; i++) if (!Number.isFinite(a[i])) return false;
  return true;
}
