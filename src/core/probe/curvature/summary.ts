/**
 * The curvature readout's numbers: extreme eigenvalues with error bounds, condition number of the
 * positive part, share of negative curvature, trace, and the recipe's largest stable learning
 * rate with its margin, from either the dense spectrum (small P) or Lanczos + SLQ + the trace
 * (exact where the objective gives it, else Hutchinson's estimate).
 */
import type { Objective, Rows } from '../../objective';
import type { Recipe } from '../../setup';
import type { IterationControl, StopReason } from '../../linalg/operator';
import type { LanczosOptions, LanczosResult } from '../../linalg/lanczos';
import { lanczosExtremes, lanczosExtremesSliced } from '../../linalg/lanczos';
import type { DensityOptions, SpectralDensity } from '../../linalg/density';
import { densityOfRules, spectralDensity, withProbes } from '../../linalg/density';
import type { CurvatureKind } from './operator';
import { curvatureOperator } from './operator';
import type { DenseSpectrum } from './dense';
import { DENSE_LIMIT, denseSpectrum } from './dense';
import { densityTraceTask, stepMetricPart, tracePart, type DensityTraceJob, type DensityTraceRunner, type DensityTraceTask, type StepMetricTask, type StepMetricValue, type TracePart } from './parts';
import { Rng } from '../../rng';
import type { StabilityBound, StepMetric } from './stability';
import { stabilityBound, stabilityFactor } from './stability';

/** Default relative cutoff: eigenvalues within ±1e-6·max|λ| of zero count as zero. */
export const DEFAULT_CUTOFF = 1e-6;

/** The measured spectrum facts the summary is computed from. */
export interface CurvatureSpectrum {
  readonly method: 'dense' | 'lanczos';
  readonly kind: CurvatureKind;
  readonly parameterCount: number;
  /** Largest eigenvalues, descending, with absolute error bounds. */
  readonly top: readonly number[];
  readonly topBounds: readonly number[];
  /** Smallest (most negative) eigenvalues, ascending, with absolute error bounds. */
  readonly bottom: readonly number[];
  readonly bottomBounds: readonly number[];
  /** All eigenvalues (dense only). */
  readonly eigenvalues: Float64Array | null;
  /** tr(M) and its standard error (0 when exact), or null when not measured. */
  readonly trace: { readonly value: number; readonly standardError: number; readonly method: 'exact' | 'hutchinson' } | null;
  /** Share of eigenvalues below −cutoff·max|λ|, or null when not measured. */
  readonly negativeShare: { readonly value: number; readonly method: 'dense-count' | 'slq'; readonly cutoff: number } | null;
  /** The SLQ density when computed (matrix-free path). */
  readonly density: SpectralDensity | null;
  /** Asymmetry of the dense matrix (dense only; see `denseHessian`). */
  readonly asymmetry: number | null;
  /** Operator products spent. */
  readonly products: number;
  /** `converged`, or why the main eigen-solve stopped early. */
  readonly stop: StopReason;
}

/** Facts of a dense spectrum (all bounds are the eigen-solver's backward error scale, 1e-13·max|λ|·√P). */
export function spectrumFromDense(d: DenseSpectrum, kind: CurvatureKind, k = 5, cutoff = DEFAULT_CUTOFF): CurvatureSpectrum {
  const ev = d.eigenvalues;
  const n = ev.length;
  if (n === 0) throw new Error('dense spectrum is empty (the dense Hessian was cancelled)');
  const scale = Math.max(Math.abs(ev[0]), Math.abs(ev[n - 1]));
  // common practice: a backward-stable solver's eigenvalue error is O(n·ε·‖A‖); √n is the usual observed growth.
  const bound = 1e-13 * scale * Math.sqrt(n) + d.asymmetry * scale;
  const kk = Math.min(k, n);
  let tr = 0;
  for (const x of ev) tr += x;
  const neg = ev.filter((x) => x < -cutoff * scale).length;
  return {
    method: 'dense',
    kind,
    parameterCount: n,
    top: Array.from({ length: kk }, (_, i) => ev[n - 1 - i]),
    topBounds: new Array<number>(kk).fill(bound),
    bottom: Array.from({ length: kk }, (_, i) => ev[i]),
    bottomBounds: new Array<number>(kk).fill(bound),
    eigenvalues: ev,
    trace: { value: tr, standardError: 0, method: 'exact' },
    negativeShare: { value: neg / n, method: 'dense-count', cutoff },
    density: null,
    asymmetry: d.asymmetry,
    products: d.products,
    stop: d.stop,
  };
}

/** Facts of a Lanczos run (with optional SLQ density and trace). */
export function spectrumFromLanczos(
  parameterCount: number,
  kind: CurvatureKind,
  l: LanczosResult,
  density: SpectralDensity | null,
  trace: TracePart | null
): CurvatureSpectrum {
  return {
    method: 'lanczos',
    kind,
    parameterCount,
    top: l.largest.map((p) => p.value),
    topBounds: l.largest.map((p) => p.errorBound),
    bottom: l.smallest.map((p) => p.value),
    bottomBounds: l.smallest.map((p) => p.errorBound),
    eigenvalues: null,
    trace: trace === null ? null : { value: trace.value, standardError: trace.standardError, method: trace.method },
    negativeShare: density === null ? null : { value: density.negativeShare, method: 'slq', cutoff: density.negativeCutoff },
    density,
    asymmetry: null,
    products: l.products + (density?.products ?? 0) + (trace?.products ?? 0),
    stop: l.stop,
  };
}

/** The curvature readout's derived numbers. */
export interface CurvatureSummary {
  readonly method: 'dense' | 'lanczos';
  readonly kind: CurvatureKind;
  readonly lambdaMax: number;
  readonly lambdaMaxBound: number;
  /** Most negative (smallest) eigenvalue, or null when only the top end was computed. */
  readonly lambdaMin: number | null;
  readonly lambdaMinBound: number | null;
  /** λmax / (smallest eigenvalue above cutoff·λmax), or null with `conditionNote` saying why. */
  readonly conditionNumber: number | null;
  /** The relative cutoff used for "positive" and "negative". */
  readonly cutoff: number;
  readonly conditionNote: string;
  readonly negativeShare: number | null;
  readonly negativeShareMethod: 'dense-count' | 'slq' | null;
  readonly trace: number | null;
  readonly traceStandardError: number | null;
  /** How the trace was obtained: exactly (dense: the spectrum's sum; matrix-free: `Objective.exactTrace`) or by Hutchinson's estimate. */
  readonly traceMethod: 'exact' | 'hutchinson' | null;
  /** Largest stable learning rate of the recipe and the stability margin. */
  readonly stability: StabilityBound;
  /** The operator the stability bound used, e.g. `plain Hessian` or `frozen diagonal preconditioner P^-1`. */
  readonly stepMetric: string;
  /** Caveat shown with every curvature readout. */
  readonly caveat: string;
}

/** Options of {@link curvatureSummary}. */
export interface SummaryOptions {
  /** Learning rate in effect (schedule applied). Default `recipe.lr`. */
  lr?: number;
  /** λmax of the step operator D^{1/2}(A + sI)D^{1/2} when it differs from A (see `stepMetric`). */
  stepSharpness?: { value: number; bound: number; description: string };
  /** Relative cutoff for positive / negative (default 1e-6). */
  cutoff?: number;
}

/** The caveat every curvature readout carries. */
export const CURVATURE_CAVEAT =
  'Curvature of this model on these rows at these weights: the local quadratic model predicts stability for the next steps only, and a small proxy model does not guarantee the same limits at scale.';

/**
 * Derived numbers of a measured spectrum: λmax, λmin, condition number of the positive part
 * (λmax over the smallest eigenvalue above cutoff·λmax), negative share, trace, and the recipe's
 * largest stable learning rate and margin (formulas and sources in `stability.ts`).
 */
export function curvatureSummary(s: CurvatureSpectrum, recipe: Recipe, options: SummaryOptions = {}): CurvatureSummary {
  const cutoff = options.cutoff ?? DEFAULT_CUTOFF;
  if (s.top.length === 0) throw new Error('curvature summary needs the largest eigenvalue (run with which = largest or both)');
  const lambdaMax = s.top[0];
  const lambdaMin = s.bottom.length > 0 ? s.bottom[0] : null;
  let conditionNumber: number | null = null;
  let conditionNote: string;
  const floor = cutoff * Math.abs(lambdaMax);
  if (!(lambdaMax > 0)) {
    conditionNote = 'no positive curvature';
  } else if (s.eigenvalues !== null) {
    const smallest = s.eigenvalues.find((x) => x > floor);
    conditionNumber = smallest === undefined ? null : lambdaMax / smallest;
    conditionNote = `λmax / smallest eigenvalue above ${cutoff}·λmax (dense spectrum)`;
  } else if (lambdaMin !== null && lambdaMin > floor) {
    conditionNumber = lambdaMax / lambdaMin;
    conditionNote = 'λmax / λmin: every eigenvalue is positive (Lanczos ends)';
  } else {
    conditionNote =
      lambdaMin === null
        ? 'not available: only the top of the spectrum was computed'
        : 'not available matrix-free: the smallest positive eigenvalue lies inside an indefinite or singular spectrum; use the dense path';
  }
  const step = options.stepSharpness;
  const f = stabilityFactor(recipe);
  const lr = options.lr ?? recipe.lr;
  let stability: StabilityBound;
  if (f.preconditioned && step === undefined) {
    // No preconditioner yet (before the first step) or none passed: the plain λmax says nothing here.
    stability = { ...f, sharpness: NaN, largestStableLr: null, lr, margin: null, sharpnessLimit: null, note: `${f.note}; needs the optimizer's diagonal preconditioner, available after the first step` };
  } else {
    stability = stabilityBound(recipe, step?.value ?? lambdaMax, lr);
  }
  return {
    method: s.method,
    kind: s.kind,
    lambdaMax,
    lambdaMaxBound: s.topBounds[0],
    lambdaMin,
    lambdaMinBound: s.bottomBounds.length > 0 ? s.bottomBounds[0] : null,
    conditionNumber,
    cutoff,
    conditionNote,
    negativeShare: s.negativeShare?.value ?? null,
    negativeShareMethod: s.negativeShare?.method ?? null,
    trace: s.trace?.value ?? null,
    traceStandardError: s.trace?.standardError ?? null,
    traceMethod: s.trace?.method ?? null,
    stability,
    stepMetric: step?.description ?? 'plain Hessian',
    caveat: CURVATURE_CAVEAT,
  };
}

/** Options of {@link measureCurvature}. */
export interface MeasureOptions extends IterationControl {
  rows?: Rows;
  kind?: CurvatureKind;
  /** `auto` (default): dense when P ≤ denseLimit, else Lanczos. */
  method?: 'auto' | 'dense' | 'lanczos';
  denseLimit?: number;
  /** Eigenvalues reported at each end (default 5). */
  k?: number;
  /**
   * Lanczos tolerance (default 1e-10) and step cap (default 300). The readout reports eigenvalues,
   * not vectors: a value has converged when its error bound is at most tol·max|θ| (and its residual
   * at most √tol·max|θ|; `LanczosOptions.criterion` `eigenvalue`).
   */
  tol?: number;
  maxIterations?: number;
  /**
   * SLQ density on the matrix-free path (default `{ probes: 4, steps: 40 }`; false to skip). The
   * main Lanczos run, from a seeded random unit vector like every probe, is the last of the
   * probes, with as many nodes as it took steps; the others are drawn with `steps` steps each.
   */
  density?: DensityOptions | false;
  /**
   * Matrix-free path: Hutchinson probes where the trace is not exact (default 32; 0 skips the
   * trace). A network's Gauss-Newton trace, and the Hessian trace of a network whose activations
   * are all piecewise linear, are computed exactly instead (`Objective.exactTrace`).
   */
  traceProbes?: number;
  /**
   * Matrix-free path: fuse multiply-adds in the Hessian-vector products where the engine can
   * (WebAssembly relaxed SIMD; default true). About a sixth faster; the values then differ from
   * an engine without it in their last bits, well inside the error bounds shown.
   */
  fused?: boolean;
  /** Learning rate in effect (default `recipe.lr`). */
  lr?: number;
  /** The step operator (see `stepMetric`); default plain Hessian. */
  metric?: StepMetric;
  cutoff?: number;
  /**
   * Matrix-free path only: called once with a readout of the top end alone (λmax, the top values
   * that have converged, the stability bound; `partial` set, λmin, density and trace not yet
   * measured) as soon as λmax has converged while Lanczos still works on the rest. The complete
   * readout follows; its values may differ within the bounds shown.
   */
  onTopEnd?: (partial: CurvatureReport) => void;
  /**
   * {@link measureCurvatureWith} only: called after every Lanczos step; a promise it returns is
   * awaited first (a turn for the caller's event loop, so that a stop request can reach
   * `shouldStop`), undefined goes straight on.
   */
  pause?: () => Promise<void> | undefined;
  /**
   * {@link measureCurvatureWith} only: settles when a stop is requested. Waiting for the other
   * thread's density and trace then ends at once (the task is cancelled and the readout comes
   * back `cancelled`, without them).
   */
  stopped?: Promise<void>;
}

/** The message of the error {@link measureCurvature} throws when cancelled before any eigenvalue exists. */
export const CANCELLED = 'curvature measurement was cancelled before any eigenvalue was available';

/** Spectrum plus summary. */
export interface CurvatureReport {
  readonly spectrum: CurvatureSpectrum;
  readonly summary: CurvatureSummary;
  /** Threads that computed it (2 when a runner computed the density and trace in another thread). */
  readonly threads?: number;
  /** Set when the products fused their multiply-adds (see `MeasureOptions.fused`). */
  readonly fused?: true;
  /** Set on the early top-end readout of `onTopEnd`: the bottom end, density and trace are still running. */
  readonly partial?: true;
}

/**
 * Measures the curvature of `objective` at `w` and summarizes it for `recipe`: the dense spectrum
 * when P ≤ denseLimit (default 2000), else Lanczos (both ends), SLQ density and the trace (exact
 * where the objective gives it, else Hutchinson's estimate).
 * When the step metric is not the plain Hessian, one more top-1 Lanczos (or dense) solve on
 * D^{1/2}(M + sI)D^{1/2} gives the sharpness the stability bound uses.
 *
 * A run cancelled part-way returns what it has (`spectrum.stop` = `cancelled`, unconverged values
 * carry their error bounds; density and trace are skipped); cancelled before the first eigenvalue
 * (or during the dense Hessian) it throws {@link CANCELLED}.
 *
 * @param rng - seeded generator; sub-streams `lanczos`, `density`, `trace`, `step-metric` are forked from it.
 */
export function measureCurvature(objective: Objective, w: Float64Array, recipe: Recipe, rng: Rng, options: MeasureOptions = {}): CurvatureReport {
  const plan = planParts(objective, w, rng, options);
  if (plan.dense) return finish(objective, w, recipe, rng, options, denseSpectrumFacts(objective, w, options));
  const step = stepSharpnessOnce(objective, w, rng, options);
  const l = lanczosPart(objective, w, recipe, rng, options, step, plan.density !== null);
  const densityOptions = plan.task.density === null ? null : { ...plan.task.density, onProgress: options.onProgress, shouldStop: options.shouldStop };
  const drawn = densityOptions === null || l.stop === 'cancelled' ? null : spectralDensity(curvatureOperator(objective, w, { rows: options.rows, kind: plan.task.kind, fused: plan.task.fused }).apply, objective.parameterCount, Rng.fromState(plan.task.densityRng), densityOptions);
  const density = l.stop === 'cancelled' ? null : withMainProbe(plan.density, drawn, l);
  const skipTrace = plan.task.traceProbes === 0 || l.stop === 'cancelled' || density?.stop === 'cancelled';
  const traceOp = curvatureOperator(objective, w, { rows: options.rows, kind: plan.task.kind, fused: plan.task.fused });
  const trace = skipTrace ? null : tracePart(objective, traceOp, w, options.rows, plan.task.kind, Rng.fromState(plan.task.traceRng), plan.task.traceProbes, { onProgress: options.onProgress, shouldStop: options.shouldStop });
  return finish(objective, w, recipe, rng, options, spectrumFromLanczos(objective.parameterCount, plan.task.kind, l, density, trace), step);
}

/**
 * {@link measureCurvature} with the density and the trace handed to `run` (another thread, on
 * its own copy of the objective) before Lanczos starts here, so the two run at the same time.
 * Same numbers as the one-thread version (same generator forks, same code); without progress
 * reports from the offloaded part.
 */
export async function measureCurvatureWith(run: DensityTraceRunner, objective: Objective, w: Float64Array, recipe: Recipe, rng: Rng, options: MeasureOptions = {}): Promise<CurvatureReport> {
  const plan = planParts(objective, w, rng, options);
  if (plan.dense || (plan.task.density === null && plan.task.traceProbes === 0 && (plan.task.stepMetric ?? null) === null)) return measureCurvature(objective, w, recipe, rng, options);
  const job = run(plan.task);
  // The other thread must hold the task before this one turns to Lanczos (see DensityTraceJob.started).
  await job.started;
  // The step metric's solve runs there first (while Lanczos runs here); the top end waits for it.
  const metric = plan.task.stepMetric ?? null;
  const offloaded = metric === null ? null : offloadedStep(job, options.metric?.description ?? '');
  const step = offloaded?.step ?? stepSharpnessOnce(objective, w, rng, options);
  let l: LanczosResult;
  try {
    l = await lanczosPart(objective, w, recipe, rng, options, step, plan.density !== null, options.pause ?? (() => undefined), offloaded?.known);
  } catch (error) {
    job.cancel();
    throw error;
  }
  const parts =
    l.stop === 'cancelled' ? null : options.stopped === undefined ? await job.result : await Promise.race([job.result, options.stopped.then(() => null)]);
  if (parts === null) {
    // Stopped during Lanczos or while waiting: the density and trace would be dropped, so the other thread stops now.
    job.cancel();
    const spectrum = spectrumFromLanczos(objective.parameterCount, plan.task.kind, l, null, null);
    return finish(objective, w, recipe, rng, options, { ...spectrum, stop: 'cancelled' }, step);
  }
  if (offloaded !== null) await offloaded.known;
  const report = finish(objective, w, recipe, rng, options, spectrumFromLanczos(objective.parameterCount, plan.task.kind, l, withMainProbe(plan.density, parts.density, l), parts.trace), step);
  return parts.elsewhere === true ? { ...report, threads: 2 } : report;
}

/** Density options without callbacks. */
type DensityPlan = Omit<DensityOptions, 'onProgress' | 'shouldStop'>;

/**
 * What runs where: the density's probes but one, and the trace, as a task (another thread's, or
 * this one's after Lanczos); `density` the whole density's options (null: no density).
 */
function planParts(objective: Objective, w: Float64Array, rng: Rng, options: MeasureOptions): { dense: boolean; task: DensityTraceTask; density: DensityPlan | null } {
  const p = objective.parameterCount;
  const denseLimit = options.denseLimit ?? DENSE_LIMIT;
  const method = options.method ?? 'auto';
  const dense = method === 'dense' || (method === 'auto' && p <= denseLimit);
  const density = options.density === false ? null : { probes: 4, steps: 40, negativeCutoff: options.cutoff, ...withoutCallbacks(options.density ?? {}) };
  const probes = density?.probes ?? 0;
  if (density !== null && !(Number.isInteger(probes) && probes >= 1)) throw new RangeError(`probes must be a positive integer, got ${probes}`);
  // The main Lanczos run starts from a seeded random unit vector: it is one of the SLQ probes.
  const drawn = density === null || probes === 1 ? null : { ...density, probes: probes - 1 };
  // The step metric's own solve (a metric that scales the Hessian) goes with the task too.
  const metric = options.metric;
  const stepMetric = metric === undefined || metric.scaling === null ? null : stepMetricTask(rng, options, metric.scaling, metric.shift);
  const task = densityTraceTask(w, options.rows, options.kind ?? 'hessian', rng, drawn, options.traceProbes ?? 32, fuses(objective, options), stepMetric);
  return { dense, task, density };
}

/**
 * The readout's density: the probes drawn for it (`drawn`, null when the main run is the only
 * one) and, as the last probe, the Gauss rule of the main Lanczos run — same start-vector law,
 * as many nodes as it took steps.
 */
function withMainProbe(plan: DensityPlan | null, drawn: SpectralDensity | null, l: LanczosResult): SpectralDensity | null {
  if (plan === null || l.rule === undefined) return drawn;
  return drawn === null ? densityOfRules([l.rule], plan) : withProbes(drawn, [l.rule], plan);
}

/** Whether the matrix-free products fuse multiply-adds: asked for (the default) and possible here. */
function fuses(objective: Objective, options: MeasureOptions): boolean {
  return options.fused !== false && objective.fusedProducts === true;
}

function withoutCallbacks(d: DensityOptions): Omit<DensityOptions, 'onProgress' | 'shouldStop'> {
  const { onProgress: _p, shouldStop: _s, ...rest } = d;
  return rest;
}

function denseSpectrumFacts(objective: Objective, w: Float64Array, options: MeasureOptions): CurvatureSpectrum {
  const kind = options.kind ?? 'hessian';
  const d = denseSpectrum(objective, w, options.rows, kind, { limit: options.denseLimit ?? DENSE_LIMIT, onProgress: options.onProgress, shouldStop: options.shouldStop });
  if (d.stop === 'cancelled') throw new Error(CANCELLED);
  return spectrumFromDense(d, kind, options.k ?? 5, options.cutoff);
}

function lanczosPart(objective: Objective, w: Float64Array, recipe: Recipe, rng: Rng, options: MeasureOptions, step: () => StepSharpness, rule: boolean): LanczosResult;
function lanczosPart(objective: Objective, w: Float64Array, recipe: Recipe, rng: Rng, options: MeasureOptions, step: () => StepSharpness, rule: boolean, pause: () => Promise<void> | undefined, ready?: Promise<void>): Promise<LanczosResult>;
/**
 * The two-ended Lanczos run of the readout (sliced with `pause` when given). With `ready` (the
 * step metric computed elsewhere) the top end is reported once it has settled, if the run has
 * not ended by then.
 */
function lanczosPart(objective: Objective, w: Float64Array, recipe: Recipe, rng: Rng, options: MeasureOptions, step: () => StepSharpness, rule: boolean, pause?: () => Promise<void> | undefined, ready?: Promise<void>): LanczosResult | Promise<LanczosResult> {
  const op = curvatureOperator(objective, w, { rows: options.rows, kind: options.kind ?? 'hessian', fused: fuses(objective, options) });
  const onTopEnd = options.onTopEnd;
  let ended = false;
  const tell = (partial: LanczosResult): void => {
    if (onTopEnd !== undefined && !ended) onTopEnd({ ...finish(objective, w, recipe, rng, options, spectrumFromLanczos(objective.parameterCount, options.kind ?? 'hessian', partial, null, null), step), partial: true });
  };
  let isReady = ready === undefined;
  void ready?.then(() => void (isReady = true));
  const onLargest = onTopEnd === undefined ? undefined : (partial: LanczosResult): void => (isReady ? tell(partial) : void ready?.then(() => tell(partial)));
  const lanczosOptions: LanczosOptions = { k: options.k ?? 5, which: 'both', tol: options.tol, criterion: 'eigenvalue', rule, maxIterations: options.maxIterations, onProgress: options.onProgress, shouldStop: options.shouldStop, onLargest };
  const some = (l: LanczosResult): LanczosResult => {
    if (l.largest.length === 0) throw new Error(CANCELLED);
    return l;
  };
  if (pause === undefined) return some(lanczosExtremes(op.apply, objective.parameterCount, rng.fork('lanczos'), lanczosOptions));
  return lanczosExtremesSliced(op.apply, objective.parameterCount, rng.fork('lanczos'), lanczosOptions, pause).then(
    (l) => {
      ended = true;
      return some(l);
    },
    (error: unknown) => {
      ended = true;
      throw error;
    }
  );
}

/**
 * What the stability bound measures: undefined for the plain Hessian's λmax; `shift` for
 * λmax + s (an unscaled metric with a shift, read off the spectrum); else the step metric's own
 * sharpness.
 */
type StepSharpness = SummaryOptions['stepSharpness'] | { readonly shift: number; readonly description: string };

/**
 * The step metric's own top-1 Lanczos solve (when the metric scales the Hessian), computed on
 * first use and kept: the early top-end readout and the complete one share it.
 */
function stepSharpnessOnce(objective: Objective, w: Float64Array, rng: Rng, options: MeasureOptions): () => StepSharpness {
  let kept: StepSharpness | null = null;
  return () => {
    if (kept !== null) return kept;
    const metric = options.metric;
    if (metric === undefined || (metric.scaling === null && metric.shift === 0)) kept = undefined;
    else if (metric.scaling === null) kept = { shift: metric.shift, description: metric.description };
    else {
      const v = stepMetricPart(objective, w, options.rows, options.kind ?? 'hessian', fuses(objective, options), stepMetricTask(rng, options, metric.scaling, metric.shift), { onProgress: options.onProgress, shouldStop: options.shouldStop });
      kept = v === null ? undefined : { ...v, description: metric.description };
    }
    return kept;
  };
}

/** The step metric's solve as a task: the same generator fork and options on either thread. */
function stepMetricTask(rng: Rng, options: MeasureOptions, scaling: Float64Array, shift: number): StepMetricTask {
  return { scaling, shift, tol: options.tol, maxIterations: options.maxIterations, rng: rng.fork('step-metric').state() };
}

/**
 * The step metric's sharpness computed by the other thread (`plan.task.stepMetric`): `known`
 * settles when it has arrived — early from a runner that sends it before the density, else with
 * the result — and `step` then reads it. Read before that (a readout stopped first), the metric
 * is left out of the stability bound, as when a run is stopped before it has a value.
 */
function offloadedStep(job: DensityTraceJob, description: string): { known: Promise<void>; step: () => StepSharpness } {
  let value: StepMetricValue | null = null;
  const arrived = job.stepMetric ?? job.result.then((r) => r.stepMetric ?? null);
  const known = arrived.then(
    (v) => {
      value = v;
    },
    () => undefined
  );
  return { known, step: () => (value === null ? undefined : { ...value, description }) };
}

/** The step metric's sharpness (when the metric is not the plain Hessian) and the summary. */
function finish(objective: Objective, w: Float64Array, recipe: Recipe, rng: Rng, options: MeasureOptions, spectrum: CurvatureSpectrum, step = stepSharpnessOnce(objective, w, rng, options)): CurvatureReport {
  const s = step();
  const stepSharpness = s !== undefined && 'shift' in s ? { value: spectrum.top[0] + s.shift, bound: spectrum.topBounds[0], description: s.description } : s;
  const summary = curvatureSummary(spectrum, recipe, { lr: options.lr, stepSharpness, cutoff: options.cutoff });
  return spectrum.method === 'lanczos' && fuses(objective, options) ? { spectrum, summary, fused: true } : { spectrum, summary };
}
