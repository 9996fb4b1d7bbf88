/**
 * The evidence the findings are evaluated over: plain data only (numbers, strings, arrays,
 * records), so it can cross a Worker boundary, go into the ledger, and be re-evaluated cheaply
 * while the user steps. Every part but `setup` and `trajectory` may be missing; a rule whose
 * evidence is missing stays quiet.
 *
 * Cheap parts (one forward pass or less): `setup`, `trajectory`, `checkpointSteps`,
 * `activationsStart`, `activationsNow`, `init`, `data`. Costly parts (curvature, per-example
 * gradients, central differences): `sharpness`, `curvature`, `audit`, `noise`, `standardized`.
 * `gather.ts` builds each part from a session.
 */
import type { ActivationName, InitScheme, LossName, OptimizerName, ScheduleSetup } from '../../setup';
import type { StepRecord } from '../../state';
import type { ActivationHealth } from '../activation-health';
import type { InitCheck } from '../init-check';
import type { DataReport } from '../data-checks';
import type { NoiseScale } from '../noise-scale';
import type { AuditVerdict } from '../gradcheck';

/** What the rules need to know about the experiment (a plain summary of it). */
export interface SetupFacts {
  model: 'network' | 'quadratic' | 'rosenbrock';
  optimizer: OptimizerName;
  /** The recipe's base learning rate (before schedule and warm-up). */
  lr: number;
  momentum: number;
  nesterov: boolean;
  /** The learning-rate schedule's kind. */
  schedule: ScheduleSetup['kind'];
  weightDecay: number;
  /** Rows per update (all rows at full batch; 0 for analytic objectives). */
  batch: number;
  fullBatch: boolean;
  rows: number;
  loss: LossName;
  /** Network layers (empty for analytic objectives). */
  layers: { activation: ActivationName; units: number; fanIn: number; lrScale: number }[];
  init: InitScheme;
  gain: number;
  explicitWeights: boolean;
  /** Whether `data.standardize` is on. */
  standardized: boolean;
  /** Data loss of the best constant prediction on the training rows (null for analytic objectives). */
  baselineLoss: number | null;
  heldOut: boolean;
}

/** One sharpness measurement against the learning rate in effect at that step. */
export interface SharpnessPoint {
  step: number;
  /** λmax of the operator the stability rule uses (`stepMetric`), and its error bound. */
  sharpness: number;
  errorBound: number;
  /** Learning rate in effect at the step (schedule and warm-up applied). */
  lr: number;
  /** Largest stable learning rate factor/λ (null when no rule applies). */
  largestStableLr: number | null;
  /** lr / largestStableLr (null when no rule applies). */
  margin: number | null;
  /** The rule's formula, e.g. `2/λmax`. */
  formula: string;
}

/** Numbers of one full curvature measurement (`CurvatureSummary`). */
export interface CurvatureFacts {
  step: number;
  method: 'dense' | 'lanczos';
  lambdaMax: number;
  lambdaMin: number | null;
  conditionNumber: number | null;
  negativeShare: number | null;
}

/** The gradient audit's per-layer verdicts (`AuditResult`). */
export interface AuditFacts {
  step: number;
  layers: { layer: number; maxRelError: number; verdict: AuditVerdict }[];
  /** Smallest max relative error over the step-size sweep (round-off is ruled out when this is still large). */
  bestOverSweep: number;
}

/** The stability limit measured at step 0 of the same experiment with `data.standardize: true`. */
export interface StandardizedFit {
  sharpness: number;
  largestStableLr: number | null;
  formula: string;
}

/** Everything the rules look at (see the module comment). */
export interface Evidence {
  setup: SetupFacts;
  /** Step records, record 0 first, step-ascending (may be thinned). */
  trajectory: readonly StepRecord[];
  /** Steps of the branch's checkpoints (where a proposal can branch from without re-stepping far). */
  checkpointSteps?: readonly number[];
  /** Activation health at step 0 and at the current step. */
  activationsStart?: ActivationHealth;
  activationsNow?: ActivationHealth;
  init?: InitCheck;
  data?: DataReport;
  sharpness?: readonly SharpnessPoint[];
  curvature?: CurvatureFacts;
  audit?: AuditFacts;
  noise?: NoiseScale;
  standardized?: StandardizedFit;
}
