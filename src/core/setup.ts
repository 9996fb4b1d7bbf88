/**
 * The normalized experiment definition that `spec/` produces from the user's text and
 * `core/` consumes: every default applied, every shape checked. Plain JSON data.
 *
 * Vocabulary: the *setup* is what is optimized (model, data, loss, regularization); the
 * *recipe* is how (optimizer, hyper-parameters, schedule, batches).
 */
import type { Expr } from './model/expression';

/**
 * Activation functions; each has f, f′ and f″ in `core/model/activations.ts`. `expression` is the
 * user's own, written in the spec (`LayerSetup.expression`, evaluated by `core/model/expression.ts`).
 */
export type ActivationName = 'linear' | 'tanh' | 'sigmoid' | 'relu' | 'leaky-relu' | 'softplus' | 'elu' | 'gelu' | 'expression';

/**
 * A user's activation as written (`activation: { expr, derivative }`) and as evaluated: trees of
 * f(x), f′(x) and f″(x) over the one variable x (index 0). `derivedBy` says whether f′ is the
 * user's text or was derived symbolically; f″ is always derived from the f′ used.
 */
export interface ActivationExpression {
  expr: string;
  derivative: string;
  derivedBy: 'user' | 'symbolic';
  f: Expr;
  d1: Expr;
  d2: Expr;
}

/** Initialization schemes (published variances in `core/model/init.ts`). */
export type InitScheme =
  | 'lecun-normal'
  | 'lecun-uniform'
  | 'glorot-normal'
  | 'glorot-uniform'
  | 'he-normal'
  | 'he-uniform'
  | 'orthogonal';

/** Loss functions (conventions match the major frameworks' mean reductions). */
export type LossName = 'mse' | 'cross-entropy' | 'binary-cross-entropy' | 'expression';

/**
 * A user's elementwise loss term ℓ(y, t) of an output y and its target t (variables 0 and 1),
 * averaged over every output of every row like mse: as written (`loss: { expr, derivative }`) and
 * as evaluated, with ∂ℓ/∂y (the user's or derived) and ∂²ℓ/∂y² derived from it.
 */
export interface LossExpression {
  expr: string;
  derivative: string;
  derivedBy: 'user' | 'symbolic';
  f: Expr;
  d1: Expr;
  d2: Expr;
}

/**
 * Parameters of the parametrized activations, PyTorch's names and defaults:
 * leaky-relu `slope` (negative_slope, 0.01), elu `alpha` (1), softplus `beta` (1) and
 * `threshold` (20: above β·a > threshold softplus is the identity, as torch.nn.Softplus).
 */
export interface ActivationParams {
  slope: number;
  alpha: number;
  beta: number;
  threshold: number;
}

/** One dense layer: `units` outputs followed by `activation`. */
export interface LayerSetup {
  units: number;
  activation: ActivationName;
  /** Parameters of leaky-relu, elu and softplus; absent means PyTorch's defaults. */
  params?: Partial<ActivationParams>;
  /** The user's expression, present exactly when `activation` is `expression`. */
  expression?: ActivationExpression;
}

/** Explicit initial parameters of one layer: `weight` is `[units][fanIn]`, `bias` is `[units]`. */
export interface LayerWeights {
  weight: number[][];
  bias: number[];
}

/** A dense network over a data set. */
export interface NetworkModel {
  kind: 'network';
  inputs: number;
  layers: LayerSetup[];
  init: InitScheme;
  /** Multiplies the scheme's standard deviation (default 1). */
  gain: number;
  /** Explicit initial parameters (override `init`), one entry per layer. */
  weights?: LayerWeights[];
  /** The file the explicit weights were read from, when they came from one. */
  weightsOrigin?: FileOrigin;
}

/** A file an experiment read: its name as the spec wrote it, size and SHA-256 (hex) of its bytes. */
export interface FileOrigin {
  name: string;
  bytes: number;
  sha256: string;
}

/**
 * Where a data set came from when the spec named files (absent for inline data), so a run
 * can say which data it used and a replay can notice a changed file.
 */
export interface DataOrigin {
  /** Every file read, in order (training, its targets, held-out), with its own hash. */
  files: FileOrigin[];
  /** SHA-256 over the numbers actually used (`core/data/hash.ts`): what the ledger's `dataHash` records. */
  hash: string;
  /** Class labels in index order, when the target column held text (index i ↔ classes[i]). */
  classes?: string[];
  /** How each file was read, for the exported script: the resolved columns and options. */
  reading: DataReading;
}

/**
 * The resolved reading of a data source (after header detection and column lookup):
 * what an exporter needs to load the same numbers elsewhere.
 */
export interface DataReading {
  format: 'csv' | 'npy' | 'npz' | 'parquet';
  /** CSV: whether the first row was a header; CSV, npy and parquet: column indices (0-based) of features and targets. */
  header?: boolean;
  delimiter?: string;
  featureColumns?: number[];
  targetColumns?: number[];
  /** npz: the member arrays used. */
  featureArray?: string;
  targetArray?: string;
}

/** f(w) = ½ (w − c)ᵀ A (w − c) for a symmetric A. Start defaults to all ones. */
export interface QuadraticModel {
  kind: 'quadratic';
  matrix: number[][];
  center: number[];
  start: number[];
}

/** f(x, y) = (1 − x)² + 100 (y − x²)² (Rosenbrock 1960). Start defaults to (−1.2, 1). */
export interface RosenbrockModel {
  kind: 'rosenbrock';
  start: number[];
}

export type ModelSetup = NetworkModel | QuadraticModel | RosenbrockModel;

/**
 * The statistics `data.standardize` used: per input column the training rows' mean and population
 * spread; columns listed in `constant` had one value throughout (spread 0) and were only centred.
 */
export interface Standardization {
  mean: number[];
  spread: number[];
  constant: number[];
}

/** A data set held in memory: `x` is `rows × inputs` row-major; `y` is `rows × targets`. */
export interface DataSetup {
  rows: number;
  inputs: number;
  /** Number of target columns (1 for class indices). */
  targets: number;
  x: Float64Array;
  /** Regression targets, 0/1 targets for binary cross-entropy, or class indices for cross-entropy. */
  y: Float64Array;
  /** Optional held-out split, same layout. */
  heldOut?: { rows: number; x: Float64Array; y: Float64Array };
  /** Present when the data were read from files named in the spec. */
  origin?: DataOrigin;
  /**
   * Present when the spec asked for `data.standardize: true`: `x` (and the held-out `x`) hold
   * the standardized values, and these are the numbers used (`core/data/standardize.ts`).
   */
  standardized?: Standardization;
}

/** What is optimized. `data` and `loss` are absent for analytic objectives. */
export interface Setup {
  model: ModelSetup;
  data?: DataSetup;
  loss: LossName;
  /** The user's loss term, present exactly when `loss` is `expression`. */
  lossExpression?: LossExpression;
  /** Adds ½·l2·Σ‖W‖² over weight matrices (not biases). */
  l2: number;
}

/** Optimizer families. Adding one is a compile error until every `switch` handles it. */
export type OptimizerName =
  | 'sgd'
  | 'adagrad'
  | 'rmsprop'
  | 'adam'
  | 'adamw'
  | 'lbfgs'
  | 'cg'
  | 'newton'
  | 'gauss-newton'
  | 'minibatch-lbfgs';

/**
 * Learning-rate schedules; the multiplier applies to `lr` (formulas and PyTorch equivalents in
 * `core/optim/schedule.ts`). `floor` is always a fraction of lr.
 */
export type ScheduleSetup =
  | { kind: 'constant' }
  | { kind: 'step'; every: number; factor: number }
  | { kind: 'multistep'; milestones: number[]; factor: number }
  | { kind: 'factor'; factor: number; steps: number }
  | { kind: 'exponential'; gamma: number }
  | { kind: 'inverse-time'; decay: number }
  | { kind: 'polynomial'; steps: number; power: number }
  | { kind: 'cosine'; steps: number; floor: number }
  | { kind: 'restarts'; period: number; growth: number; floor: number }
  | { kind: 'onecycle'; steps: number; peak: number; anneal: 'cos' | 'linear'; divisor: number; finalDivisor: number; threePhase: boolean }
  | PlateauSchedule
  | { kind: 'sequence'; phases: PhaseSchedule[]; milestones: number[] };

/** Reduce-on-plateau: watches the full-batch loss after every update (state in the optimizer state). */
export interface PlateauSchedule {
  kind: 'plateau';
  factor: number;
  patience: number;
  threshold: number;
  thresholdMode: 'rel' | 'abs';
  cooldown: number;
  floor: number;
}

/** The schedules a `sequence` may hold: every kind but plateau, onecycle and sequence itself. */
export type PhaseSchedule = Exclude<ScheduleSetup, { kind: 'plateau' } | { kind: 'onecycle' } | { kind: 'sequence' }>;

/** How the parameters are updated. Every field has a documented default in `src/experiment/spec.schema.json`. */
export interface Recipe {
  optimizer: OptimizerName;
  lr: number;
  /** Momentum μ: SGD heavy ball in PyTorch form v ← μv + g, w ← w − ηv; RMSProp's buffer as torch.optim.RMSprop. Default 0. */
  momentum: number;
  /** SGD Nesterov momentum (PyTorch formulation). Default false. */
  nesterov: boolean;
  /** SGD dampening d: v ← μv + (1 − d)g after the first update (torch.optim.SGD). Default 0. */
  dampening: number;
  /** Adam family first/second moment decay. Defaults 0.9 / 0.999. */
  beta1: number;
  beta2: number;
  /** Adam/Adagrad/RMSProp denominator epsilon. Default 1e-8. */
  eps: number;
  /** RMSProp smoothing constant. Default 0.99 (PyTorch). */
  alpha: number;
  /** RMSProp centered variant. Default false. */
  centered: boolean;
  /** Adam AMSGrad variant. Default false. */
  amsgrad: boolean;
  /** Adagrad step decay: η / (1 + (t − 1)·lrDecay) at update t ≥ 1 (torch lr_decay). Default 0. */
  lrDecay: number;
  /** Adagrad's starting sum of squares (torch initial_accumulator_value). Default 0. */
  initialAccumulator: number;
  /** L2 penalty added to the gradient (sgd/adam/…), or decoupled decay for adamw. Default 0 (adamw: 0.01). */
  weightDecay: number;
  /** Whether `weightDecay` also applies to biases (torch applies it to every parameter of a group). Default true. */
  decayBiases: boolean;
  /** `full` or a mini-batch size (rows per step), reshuffled by the seed every epoch. */
  batch: 'full' | number;
  /** Learning-rate schedule. Default constant. */
  schedule: ScheduleSetup;
  /** Linear warm-up steps from 0 to lr. Default 0. */
  warmup: number;
  /** Clip the gradient's global norm to this value (torch clip_grad_norm_: scale max/(‖g‖ + 1e-6)); 0 disables. Default 0. */
  clipNorm: number;
  /** Clamp every gradient entry to [−clipValue, clipValue] (torch clip_grad_value_), before clipNorm; 0 disables. Default 0. */
  clipValue: number;
  /** Per-layer learning-rate multipliers (index = layer), default 1 each. */
  layers: { lrScale: number }[];
  /** L-BFGS history length m. Default 10. */
  history: number;
  /** L-BFGS iterations per step (torch max_iter). Default 1 (torch's default is 20). */
  maxIter: number;
  /** L-BFGS objective evaluations per step before it stops iterating (torch max_eval). Default ⌊maxIter·5/4⌋. */
  maxEval: number;
  /** L-BFGS stops when max|g| ≤ this (torch tolerance_grad). Default 1e-7. */
  toleranceGrad: number;
  /** L-BFGS stops when a step or loss change is below this (torch tolerance_change). Default 1e-9. */
  toleranceChange: number;
  /** Line search for L-BFGS / CG: strong Wolfe (default), Brent exact, or none. */
  lineSearch: 'strong-wolfe' | 'brent' | 'none';
  /** Nonlinear CG variant. Default `polak-ribiere`. */
  cgVariant: 'fletcher-reeves' | 'polak-ribiere';
  /** Levenberg damping for newton / gauss-newton. Default 1e-3. */
  damping: number;
  /** Inner-iteration cap per mini-batch for minibatch-lbfgs. Default 10. */
  innerSteps: number;
  /** Curvature rows: `same` (the step's batch) or a fixed batch size drawn once from the seed. */
  curvatureBatch: 'same' | 'full' | number;
}

/** A complete experiment: seed + setup + recipe. */
export interface Experiment {
  seed: number;
  setup: Setup;
  recipe: Recipe;
}
