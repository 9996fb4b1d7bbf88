/**
 * Plain-data records shared by the session (`core/session/`), the ledger (`ledger/`),
 * the worker protocol and the UI. No closures, no class instances: every field is a
 * number, string, boolean, array or typed array, so encode/decode is exact.
 */
import type { OptimizerName } from './setup';
import type { RngState } from './rng';

/** Explicit optimizer state (optax-style): everything `update` needs besides the gradient. */
export interface OptimizerState {
  /** Which optimizer family produced (and can consume) this state. */
  kind: OptimizerName;
  /** Number of updates applied so far (bias corrections, schedules). */
  t: number;
  /** Named float64 buffers, e.g. `m`, `v`, `velocity`; L-BFGS history flattened. */
  buffers: Record<string, Float64Array>;
  /** Named scalars, e.g. history fill count, previous loss. */
  scalars: Record<string, number>;
}

/** Everything needed to continue a trajectory bit for bit. */
export interface SessionState {
  /** Number of optimizer updates applied. */
  step: number;
  /** The flat parameter vector (layout: `Objective.blocks`). */
  params: Float64Array;
  optimizer: OptimizerState;
  /** Generator that draws mini-batch orders. */
  rng: RngState;
  /** Completed passes over the data. */
  epoch: number;
  /** Position inside the current epoch's row order. */
  cursor: number;
  /** The current epoch's row order (null for full batch or analytic objectives). */
  order: Int32Array | null;
}

/** Per-layer numbers of one step. */
export interface LayerRecord {
  /** Layer index (0-based). */
  layer: number;
  /** ‖W‖ (Frobenius) after the update. */
  weightNorm: number;
  /** ‖∇W‖ (Frobenius) of the gradient used. */
  gradNorm: number;
  /** ‖ΔW‖ / ‖W‖ of this update (common practice: healthy near 1e-3). */
  updateRatio: number;
}

/** What one optimizer update produced. Record k describes the state after k updates. */
export interface StepRecord {
  /** Updates applied when this record was taken. */
  step: number;
  /** Full-batch training loss after the update (regularization included). */
  loss: number;
  /** Loss on the rows the update used, before the update (at full batch: the previous record's `loss`); NaN for record 0. */
  batchLoss: number;
  /** Held-out loss after the update, when the setup has a held-out split. */
  heldOutLoss?: number;
  /** ‖g‖ of the gradient the update used. */
  gradNorm: number;
  /** ‖Δw‖ of the update. */
  updateNorm: number;
  /** Learning rate in effect (schedule and warm-up applied). */
  lr: number;
  /** Objective evaluations the update used (line searches use more than one). */
  evaluations: number;
  /** Per-layer numbers (empty for analytic objectives). */
  layers: LayerRecord[];
  /** Wall time of the update in milliseconds (not part of any fingerprint). */
  ms: number;
}
