/**
 * The normalized experiment definition that `spec/` produces from the user's text and
 * `core/` consumes: every default applied, every shape checked. Plain JSON data.
 *
 * Vocabulary: the *setup* is what is optimized (model, data, loss, regularization); the
 * *recipe* is how (optimizer, hyper-parameters, schedule, batches).
 */

/** Activation functions; each has f, f′ and f″ in `core/model/activations.ts`. */
export type ActivationName = 'linear' | 'tanh' | 'sigmoid' | 'relu' | 'leaky-relu' | 'softplus' | 'elu' | 'gelu';

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
export type LossName = 'mse' | 'cross-entropy' | 'binary-cross-entropy';

/** One dense layer: `units` outputs followed by `activation`. */
export interface LayerSetup {
  units: number;
  activation: ActivationName;
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

/** Learning-rate schedules; the multiplier applies to `lr`. */
export type ScheduleSetup =
  | { kind: 'constant' }
  | { kind: 'step'; every: number; factor: number }
  | { kind: 'exponential'; gamma: number }
  | { kind: 'inverse-time'; decay: number }
  | { kind: 'cosine'; steps: number; floor: number };

/** How the parameters are updated. Every field has a documented default in `src/experiment/spec.schema.json`. */
export interface Recipe {
  optimizer: OptimizerName;
  lr: number;
  /** Momentum μ: SGD heavy ball in PyTorch form v ← μv + g, w ← w − ηv; RMSProp's buffer as torch.optim.RMSprop. Default 0. */
  momentum: number;
  /** SGD Nesterov momentum (PyTorch formulation). Default false. */
  nesterov: boolean;
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
  /** L2 penalty added to the gradient (sgd/adam/…), or decoupled decay for adamw. Default 0 (adamw: 0.01). */
  weightDecay: number;
  /** `full` or a mini-batch size (rows per step), reshuffled by the seed every epoch. */
  batch: 'full' | number;
  /** Learning-rate schedule. Default constant. */
  schedule: ScheduleSetup;
  /** Linear warm-up steps from 0 to lr. Default 0. */
  warmup: number;
  /** Clip the gradient's global norm to this value; 0 disables. Default 0. */
  clipNorm: number;
  /** Per-layer learning-rate multipliers (index = layer), default 1 each. */
  layers: { lrScale: number }[];
  /** L-BFGS history length m. Default 10. */
  history: number;
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
