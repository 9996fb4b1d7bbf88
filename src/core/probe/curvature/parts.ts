/**
 * The curvature readout's matrix-free parts that do not depend on the Lanczos run — the step
 * metric's sharpness (adaptive optimizers), the SLQ spectral density and the trace (exact where
 * the objective gives it, else Hutchinson's estimate) — as a task of plain data (weights, rows, generator
 * states, options) that another thread can run on its own copy of the objective while this one
 * runs Lanczos. The same function runs it in-process, so both ways give the same numbers.
 */
import type { Objective, Rows } from '../../objective';
import { Rng, type RngState } from '../../rng';
import type { DensityOptions, SpectralDensity } from '../../linalg/density';
import type { IterationControl, StopReason } from '../../linalg/operator';
import { hutchinsonTrace, spectralDensity } from '../../linalg/density';
import { lanczosExtremes } from '../../linalg/lanczos';
import type { CountingOperator, CurvatureKind } from './operator';
import { curvatureOperator } from './operator';

/**
 * The step metric's top-1 Lanczos solve: λmax of D^{1/2}(M + sI)D^{1/2}, the operator an
 * adaptive optimizer's update sees (plain data).
 */
export interface StepMetricTask {
  /** The positive diagonal D. */
  readonly scaling: Float64Array;
  /** The shift s. */
  readonly shift: number;
  readonly tol?: number;
  readonly maxIterations?: number;
  /** State of the readout generator's `step-metric` fork. */
  readonly rng: RngState;
}

/** The step metric's λmax and its error bound. */
export interface StepMetricValue {
  readonly value: number;
  readonly bound: number;
}

/** Density and trace to compute (plain data: it crosses a worker boundary). */
export interface DensityTraceTask {
  readonly w: Float64Array;
  readonly rows: Int32Array | null;
  readonly kind: CurvatureKind;
  /** SLQ options without callbacks, or null to skip the density. */
  readonly density: Omit<DensityOptions, 'onProgress' | 'shouldStop'> | null;
  /** Hutchinson probes where the trace is not exact (0 skips the trace). */
  readonly traceProbes: number;
  /** Fuse multiply-adds in the products where the objective can (see `MeasureOptions.fused`). */
  readonly fused: boolean;
  /** States of the readout generator's `density` and `trace` forks. */
  readonly densityRng: RngState;
  readonly traceRng: RngState;
  /** The step metric's sharpness, computed first (absent or null: none to compute). */
  readonly stepMetric?: StepMetricTask | null;
}

/** The readout's trace: exact where the objective gives it (no products), else Hutchinson's estimate. */
export interface TracePart {
  readonly value: number;
  /** Standard error of the estimate; 0 when exact. */
  readonly standardError: number;
  readonly method: 'exact' | 'hutchinson';
  /** Operator products spent (0 when exact). */
  readonly products: number;
  readonly stop: StopReason;
}

/**
 * A Hessian-vector product on a kept pass costs about six matrix products per layer (two in the
 * R-forward pass, two outer products and two back-propagations in the R-backward one), a
 * backward pass of δ alone one: the exact trace is taken while it costs no more than the probes.
 */
const BACKWARD_PASSES_PER_PRODUCT = 6;

/**
 * The trace of `kind` at `w`: `objective.exactTrace` where it gives one (a network's
 * Gauss-Newton matrix; the Hessian of a piecewise-linear network) within the cost of `probes`
 * products, else Hutchinson's estimate with `probes` products of `op` (Hutchinson 1989).
 */
export function tracePart(objective: Objective, op: CountingOperator, w: Float64Array, rows: Rows, kind: CurvatureKind, rng: Rng, probes: number, control: IterationControl = {}): TracePart {
  const exact = objective.exactTrace?.(w, kind, rows, BACKWARD_PASSES_PER_PRODUCT * probes) ?? null;
  if (exact !== null) return { value: exact, standardError: 0, method: 'exact', products: 0, stop: 'converged' };
  const t = hutchinsonTrace(op.apply, objective.parameterCount, rng, { probes, block: { apply: op.applyBlock, size: op.blockSize }, ...control });
  return { value: t.estimate, standardError: t.standardError, method: 'hutchinson', products: t.products, stop: t.stop };
}

/**
 * λmax of the step metric of `t` at `w` (top-1 Lanczos with the eigenvalue stopping rule), or
 * null when the run was stopped before it had a value.
 */
export function stepMetricPart(objective: Objective, w: Float64Array, rows: Rows, kind: CurvatureKind, fused: boolean, t: StepMetricTask, control: IterationControl = {}): StepMetricValue | null {
  const op = curvatureOperator(objective, w, { rows, kind, scaling: t.scaling, shift: t.shift, fused });
  const l = lanczosExtremes(op.apply, objective.parameterCount, Rng.fromState(t.rng), { k: 1, tol: t.tol, criterion: 'eigenvalue', maxIterations: t.maxIterations, ...control });
  return l.largest.length === 0 ? null : { value: l.largest[0].value, bound: l.largest[0].errorBound };
}

/** What {@link runDensityTrace} returns. */
export interface DensityTrace {
  readonly density: SpectralDensity | null;
  readonly trace: TracePart | null;
  /** The step metric's sharpness when the task asked for it (absent from runners that predate it). */
  readonly stepMetric?: StepMetricValue | null;
  /** Set by a runner: true when another thread computed it. */
  readonly elsewhere?: boolean;
}

/** A task handed to a runner. */
export interface DensityTraceJob {
  /**
   * Settles once the other thread holds the task and works on it. The caller awaits it before
   * its own long synchronous work: a browser worker's messages to a worker it started are
   * delivered through its own event loop, so a task posted just before Lanczos would otherwise
   * wait for Lanczos to end and the two halves would run one after the other.
   */
  readonly started: Promise<void>;
  /** The density and trace. */
  readonly result: Promise<DensityTrace>;
  /**
   * The step metric's sharpness as soon as the other thread has it, before the density and the
   * trace (the early top-end readout waits for it). Without it, it comes with `result`.
   */
  readonly stepMetric?: Promise<StepMetricValue | null>;
  /**
   * Gives the task up (the readout was stopped): the other thread stops working on it and
   * `result` may never settle. Nothing to do for a runner that computed it already.
   */
  readonly cancel: () => void;
}

/** Runs a task somewhere (another thread). */
export type DensityTraceRunner = (task: DensityTraceTask) => DensityTraceJob;

/** The task for `rng`'s forks and these options (see `measureCurvature` for the defaults). */
export function densityTraceTask(
  w: Float64Array,
  rows: Rows,
  kind: CurvatureKind,
  rng: Rng,
  density: Omit<DensityOptions, 'onProgress' | 'shouldStop'> | null,
  traceProbes: number,
  fused: boolean,
  stepMetric: StepMetricTask | null = null
): DensityTraceTask {
  return {
    stepMetric,
    w: Float64Array.from(w),
    rows: rows === undefined ? null : Int32Array.from(rows),
    kind,
    density,
    traceProbes,
    fused,
    densityRng: rng.fork('density').state(),
    traceRng: rng.fork('trace').state(),
  };
}

/**
 * The step metric's sharpness ({@link stepMetricPart}, handed to `onStepMetric` as soon as it is
 * known), the SLQ density (Ubaru, Chen & Saad 2017) and the trace ({@link tracePart}) of the
 * task, on `objective`.
 */
export function runDensityTrace(objective: Objective, task: DensityTraceTask, onStepMetric?: (v: StepMetricValue | null) => void): DensityTrace {
  const rows = task.rows ?? undefined;
  const metric = task.stepMetric ?? null;
  const stepMetric = metric === null ? null : stepMetricPart(objective, task.w, rows, task.kind, task.fused, metric);
  if (metric !== null) onStepMetric?.(stepMetric);
  const op = curvatureOperator(objective, task.w, { rows, kind: task.kind, fused: task.fused });
  const p = objective.parameterCount;
  const density = task.density === null ? null : spectralDensity(op.apply, p, Rng.fromState(task.densityRng), task.density);
  const trace = task.traceProbes === 0 ? null : tracePart(objective, op, task.w, task.rows ?? undefined, task.kind, Rng.fromState(task.traceRng), task.traceProbes);
  return metric === null ? { density, trace } : { density, trace, stepMetric };
}
