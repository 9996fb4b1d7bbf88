/**
 * Turns a spec value that passed the schema and the cross-field checks into the
 * normalized {@link Experiment}: every default applied, data packed row-major into
 * Float64Arrays. Defaults here match the `description`s of `spec.schema.json`.
 */
import { activationExpression, lossExpression } from './expression';
import type {
  ActivationName, ActivationParams, DataSetup, PhaseSchedule, Experiment, InitScheme, LayerSetup, LayerWeights, LossName, ModelSetup,
  OptimizerName, Recipe, ScheduleSetup,
} from '../core/setup';
import type { LoadedFiles } from './files';
import { standardizeData } from '../core/data/standardize';

type Obj = Record<string, unknown>;

const obj = (v: unknown): Obj => (typeof v === 'object' && v !== null && !Array.isArray(v) ? (v as Obj) : {});
const numOr = (v: unknown, d: number): number => (typeof v === 'number' ? v : d);
const boolOr = (v: unknown, d: boolean): boolean => (typeof v === 'boolean' ? v : d);
const strOr = <T extends string>(v: unknown, d: T): T => (typeof v === 'string' ? (v as T) : d);
const vec = (v: unknown): number[] => (v as number[]).slice();
const mat = (v: unknown): number[][] => (v as number[][]).map((r) => r.slice());

/**
 * Recipe defaults (PyTorch's where it has one). `weightDecay` is 0, or 0.01 for adamw; `maxIter`
 * is 1 (one L-BFGS iteration per step; torch's default is 20) and `maxEval` {@link defaultMaxEval}.
 */
export const RECIPE_DEFAULTS: Readonly<Omit<Recipe, 'layers' | 'schedule'>> = {
  optimizer: 'sgd', lr: 0.01, momentum: 0, nesterov: false, dampening: 0, beta1: 0.9, beta2: 0.999, eps: 1e-8, alpha: 0.99,
  centered: false, amsgrad: false, lrDecay: 0, initialAccumulator: 0, weightDecay: 0, decayBiases: true, batch: 'full',
  warmup: 0, clipNorm: 0, clipValue: 0, history: 10, maxIter: 1, maxEval: 26, toleranceGrad: 1e-7, toleranceChange: 1e-9,
  lineSearch: 'strong-wolfe', cgVariant: 'polak-ribiere', damping: 1e-3, innerSteps: 10, curvatureBatch: 'same',
};

/**
 * Optimizers that treat `lr` as the first trial step of a line search or a Newton step,
 * where PyTorch's L-BFGS and the textbook methods start from 1 (Nocedal & Wright 2006, §3.5).
 */
export const UNIT_STEP_OPTIMIZERS: readonly OptimizerName[] = ['lbfgs', 'cg', 'newton', 'gauss-newton', 'minibatch-lbfgs'];

/** The default `lr` of an optimizer: 1 for line-search and Newton families, else 0.01. */
export function defaultLr(optimizer: OptimizerName): number {
  return UNIT_STEP_OPTIMIZERS.includes(optimizer) ? 1 : RECIPE_DEFAULTS.lr;
}

/**
 * Default `maxEval`: torch's ⌊maxIter·5/4⌋, except 26 for a single iteration, so that its
 * line search keeps 25 trials (torch ≥ 2.0 gives a search maxEval minus the evaluations made,
 * which torch's own default leaves at 0 for max_iter 1; torch 1.13 gave 25).
 */
export function defaultMaxEval(maxIter: number): number {
  return maxIter === 1 ? 26 : Math.floor((maxIter * 5) / 4);
}

/** Packs rows into one row-major Float64Array. */
function pack(rows: number[][], width: number): Float64Array {
  const out = new Float64Array(rows.length * width);
  rows.forEach((r, i) => out.set(r, i * width));
  return out;
}

function targets(y: unknown[]): number[][] {
  return y.map((r) => (typeof r === 'number' ? [r] : (r as number[])));
}

function buildData(raw: Obj, inputs: number): DataSetup {
  const x = raw.x as number[][];
  const y = targets(raw.y as unknown[]);
  const width = y[0].length;
  const data: DataSetup = { rows: x.length, inputs, targets: width, x: pack(x, inputs), y: pack(y, width) };
  const held = raw.heldOut;
  if (held !== undefined) {
    const h = obj(held);
    const hx = h.x as number[][];
    data.heldOut = { rows: hx.length, x: pack(hx, inputs), y: pack(targets(h.y as unknown[]), width) };
  }
  // Training statistics for both splits; the numbers used are kept in `data.standardized`.
  return raw.standardize === true ? standardizeData(data) : data;
}

function buildModel(raw: Obj): ModelSetup {
  const objective = raw.objective;
  if (objective === 'quadratic') {
    const matrix = mat(raw.matrix);
    const n = matrix.length;
    return {
      kind: 'quadratic',
      matrix,
      center: raw.center !== undefined ? vec(raw.center) : new Array<number>(n).fill(0),
      start: raw.start !== undefined ? vec(raw.start) : new Array<number>(n).fill(1),
    };
  }
  if (objective === 'rosenbrock') return { kind: 'rosenbrock', start: raw.start !== undefined ? vec(raw.start) : [-1.2, 1] };
  const layers: LayerSetup[] = (raw.layers as Obj[]).map((l) => {
    const layer: LayerSetup = { units: l.units as number, activation: strOr<ActivationName>(l.activation, 'linear') };
    if (typeof l.activation === 'object' && l.activation !== null && !Array.isArray(l.activation)) {
      const a = l.activation as Obj;
      const read = activationExpression(String(a.expr), typeof a.derivative === 'string' ? a.derivative : undefined);
      if (!read.ok) throw new Error(read.problem.message); // crossCheck reported it first
      layer.activation = 'expression';
      layer.expression = read.value;
    }
    const params: Partial<ActivationParams> = {};
    for (const k of ['slope', 'alpha', 'beta', 'threshold'] as const) if (typeof l[k] === 'number') params[k] = l[k] as number;
    if (Object.keys(params).length > 0) layer.params = params;
    return layer;
  });
  const model: ModelSetup = {
    kind: 'network',
    inputs: raw.inputs as number,
    layers,
    init: strOr<InitScheme>(raw.init, 'lecun-normal'),
    gain: numOr(raw.gain, 1),
  };
  if (Array.isArray(raw.weights))
    model.weights = (raw.weights as Obj[]).map((w): LayerWeights => ({ weight: mat(w.weight), bias: vec(w.bias) }));
  return model;
}

function buildSchedule(raw: unknown): ScheduleSetup {
  if (raw === undefined) return { kind: 'constant' };
  const s = obj(raw);
  switch (s.kind as ScheduleSetup['kind']) {
    case 'multistep':
      return { kind: 'multistep', milestones: vec(s.milestones), factor: numOr(s.factor, 0.1) };
    case 'factor':
      return { kind: 'factor', factor: s.factor as number, steps: s.steps as number };
    case 'polynomial':
      return { kind: 'polynomial', steps: s.steps as number, power: numOr(s.power, 1) };
    case 'restarts':
      return { kind: 'restarts', period: s.period as number, growth: numOr(s.growth, 1), floor: numOr(s.floor, 0) };
    case 'onecycle':
      return {
        kind: 'onecycle', steps: s.steps as number, peak: numOr(s.peak, 0.3), anneal: strOr<'cos' | 'linear'>(s.anneal, 'cos'),
        divisor: numOr(s.divisor, 25), finalDivisor: numOr(s.finalDivisor, 1e4), threePhase: boolOr(s.threePhase, false),
      };
    case 'plateau':
      return {
        kind: 'plateau', factor: numOr(s.factor, 0.1), patience: numOr(s.patience, 10), threshold: numOr(s.threshold, 1e-4),
        thresholdMode: strOr<'rel' | 'abs'>(s.thresholdMode, 'rel'), cooldown: numOr(s.cooldown, 0), floor: numOr(s.floor, 0),
      };
    case 'sequence':
      return { kind: 'sequence', phases: (s.phases as unknown[]).map((p) => buildSchedule(p) as PhaseSchedule), milestones: vec(s.milestones) };
    case 'constant':
      return { kind: 'constant' };
    case 'step':
      return { kind: 'step', every: s.every as number, factor: numOr(s.factor, 0.1) };
    case 'exponential':
      return { kind: 'exponential', gamma: s.gamma as number };
    case 'inverse-time':
      return { kind: 'inverse-time', decay: s.decay as number };
    case 'cosine':
      return { kind: 'cosine', steps: s.steps as number, floor: numOr(s.floor, 0) };
  }
}

function buildRecipe(raw: Obj, layerCount: number): Recipe {
  const d = RECIPE_DEFAULTS;
  const optimizer = strOr<OptimizerName>(raw.optimizer, d.optimizer);
  const batch = raw.batch === undefined ? d.batch : (raw.batch as Recipe['batch']);
  const maxIter = numOr(raw.maxIter, d.maxIter);
  const curvatureBatch = raw.curvatureBatch === undefined ? d.curvatureBatch : (raw.curvatureBatch as Recipe['curvatureBatch']);
  const layers = Array.isArray(raw.layers)
    ? (raw.layers as Obj[]).map((l) => ({ lrScale: l.lrScale as number }))
    : Array.from({ length: layerCount }, () => ({ lrScale: 1 }));
  return {
    optimizer,
    lr: numOr(raw.lr, defaultLr(optimizer)),
    momentum: numOr(raw.momentum, d.momentum),
    nesterov: boolOr(raw.nesterov, d.nesterov),
    dampening: numOr(raw.dampening, d.dampening),
    beta1: numOr(raw.beta1, d.beta1),
    beta2: numOr(raw.beta2, d.beta2),
    eps: numOr(raw.eps, d.eps),
    alpha: numOr(raw.alpha, d.alpha),
    centered: boolOr(raw.centered, d.centered),
    amsgrad: boolOr(raw.amsgrad, d.amsgrad),
    lrDecay: numOr(raw.lrDecay, d.lrDecay),
    initialAccumulator: numOr(raw.initialAccumulator, d.initialAccumulator),
    weightDecay: numOr(raw.weightDecay, optimizer === 'adamw' ? 0.01 : d.weightDecay),
    decayBiases: boolOr(raw.decayBiases, d.decayBiases),
    batch,
    schedule: buildSchedule(raw.schedule),
    warmup: numOr(raw.warmup, d.warmup),
    clipNorm: numOr(raw.clipNorm, d.clipNorm),
    clipValue: numOr(raw.clipValue, d.clipValue),
    layers,
    history: numOr(raw.history, d.history),
    maxIter,
    maxEval: numOr(raw.maxEval, defaultMaxEval(maxIter)),
    toleranceGrad: numOr(raw.toleranceGrad, d.toleranceGrad),
    toleranceChange: numOr(raw.toleranceChange, d.toleranceChange),
    lineSearch: strOr<Recipe['lineSearch']>(raw.lineSearch, d.lineSearch),
    cgVariant: strOr<Recipe['cgVariant']>(raw.cgVariant, d.cgVariant),
    damping: numOr(raw.damping, d.damping),
    innerSteps: numOr(raw.innerSteps, d.innerSteps),
    curvatureBatch,
  };
}

/** Data read from files, standardized when the spec asks, keeping where they came from. */
function fileData(data: DataSetup, standardize: boolean): DataSetup {
  if (!standardize) return data;
  const out = standardizeData(data);
  if (data.origin) out.origin = data.origin;
  return out;
}

/**
 * Builds the normalized experiment from a validated spec value and the files it names (read by `files.ts`).
 * With `deferred`, data named by `data.file` is left out (`setup.data` undefined): see `SpecOptions.deferFiles`.
 */
export function buildExperiment(value: unknown, loaded: LoadedFiles = {}, deferred = false): Experiment {
  const spec = obj(value);
  const model = buildModel(obj(spec.model));
  if (model.kind === 'network' && loaded.weights !== undefined) {
    model.weights = loaded.weights.layers;
    model.weightsOrigin = loaded.weights.origin;
  }
  const loss = strOr<LossName>(spec.loss, 'mse');
  const l2 = numOr(obj(spec.regularization).l2, 0);
  const layerCount = model.kind === 'network' ? model.layers.length : 0;
  const setup: Experiment['setup'] = { model, loss, l2 };
  if (typeof spec.loss === 'object' && spec.loss !== null && !Array.isArray(spec.loss)) {
    const raw = spec.loss as Obj;
    const read = lossExpression(String(raw.expr), typeof raw.derivative === 'string' ? raw.derivative : undefined);
    if (!read.ok) throw new Error(read.problem.message); // crossCheck reported it first
    setup.loss = 'expression';
    setup.lossExpression = read.value;
  }
  const fromFile = typeof obj(spec.data).file === 'string';
  if (model.kind === 'network' && !(deferred && fromFile && loaded.data === undefined)) {
    setup.data = loaded.data ? fileData(loaded.data, obj(spec.data).standardize === true) : buildData(obj(spec.data), model.inputs);
  }
  return { seed: numOr(spec.seed, 0), setup, recipe: buildRecipe(obj(spec.recipe), layerCount) };
}
