/**
 * Generalization along a trajectory: the held-out loss beside the training loss at every
 * recorded step, the gap between them, where the held-out loss was lowest, and whether it has
 * risen since while the training loss kept falling (the pattern early stopping watches for;
 * Prechelt, "Early Stopping — But When?", 1998 — from memory).
 */
import type { StepRecord } from '../state';

/** Result of {@link generalization}. */
export interface Generalization {
  steps: number[];
  train: number[];
  heldOut: number[];
  /** heldOut − train per step. */
  gap: number[];
  /** The lowest finite held-out loss and its step. */
  best: { step: number; heldOut: number; train: number };
  /** The last record's numbers. */
  last: { step: number; heldOut: number; train: number };
  /** heldOut_last / heldOut_best − 1 (≥ 0). */
  riseSinceBest: number;
  /** Steps since the best held-out loss. */
  stepsSinceBest: number;
  /** Whether the training loss at the last step is below its value at the best held-out step. */
  trainFellSinceBest: boolean;
}

/** The generalization readout, or null when no record carries a held-out loss. */
export function generalization(trajectory: readonly StepRecord[]): Generalization | null {
  const recs = trajectory.filter((r) => r.heldOutLoss !== undefined);
  if (recs.length === 0) return null;
  const steps = recs.map((r) => r.step);
  const train = recs.map((r) => r.loss);
  const heldOut = recs.map((r) => r.heldOutLoss as number);
  let b = -1;
  for (let i = 0; i < recs.length; i++) if (Number.isFinite(heldOut[i]) && (b < 0 || heldOut[i] < heldOut[b])) b = i;
  const l = recs.length - 1;
  const best = b < 0 ? { step: steps[l], heldOut: NaN, train: train[l] } : { step: steps[b], heldOut: heldOut[b], train: train[b] };
  return {
    steps, train, heldOut,
    gap: recs.map((_, i) => heldOut[i] - train[i]),
    best,
    last: { step: steps[l], heldOut: heldOut[l], train: train[l] },
    riseSinceBest: b < 0 ? NaN : heldOut[l] / heldOut[b] - 1,
    stepsSinceBest: steps[l] - best.step,
    trainFellSinceBest: train[l] < best.train,
  };
}
