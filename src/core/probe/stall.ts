/**
 * A stall: the newest updates moved nothing (‖Δw‖ = 0) while the loss is finite. Line-search
 * optimizers stay in place when no trial step along their direction lowers the loss (as
 * torch.optim.LBFGS does), so an absurd first trial step (`lr`) or a broken direction shows up as
 * a run of zero updates rather than an error; this names it.
 */
import type { StepRecord } from '../state';

/** The run of zero updates at the end of a trajectory. */
export interface Stall {
  /** First step of the run of zero updates (record steps: the state after that update). */
  from: number;
  /** Last step of the run (the newest record). */
  to: number;
  /** Updates in the run. */
  updates: number;
}

/**
 * The run of updates with ‖Δw‖ = 0 that ends the trajectory, when it holds at least
 * `minUpdates` updates (default 2: one zero update can be a converged step) and the loss is
 * finite; otherwise null. Records must be in step order; record 0 (no update) never counts.
 */
export function trailingStall(records: readonly StepRecord[], minUpdates = 2): Stall | null {
  let k = records.length - 1;
  if (k < 0 || !Number.isFinite(records[k].loss)) return null;
  let updates = 0;
  while (k >= 0 && records[k].step > 0 && records[k].updateNorm === 0 && records[k].gradNorm > 0) {
    updates++;
    k--;
  }
  if (updates < minUpdates) return null;
  return { from: records[k + 1].step, to: records[records.length - 1].step, updates };
}
