/**
 * Sharpness along a trajectory: λmax of the Hessian on one fixed curvature batch, recorded every
 * `every` optimizer steps of a session. Under full-batch gradient descent with step η, λmax
 * typically rises until it hovers near 2/η (Cohen et al., "Gradient Descent on Neural Networks
 * Typically Occurs at the Edge of Stability", ICLR 2021), which this readout makes visible.
 *
 * Each measurement warm-starts Lanczos from the previous top eigenvector, which changes slowly
 * between nearby weights, so later measurements need few products.
 */
import type { Objective, Rows } from '../../objective';
import type { Rng } from '../../rng';
import type { IterationControl, StopReason } from '../../linalg/operator';
import { reportProgress, stopRequested } from '../../linalg/operator';
import { lanczosExtremes } from '../../linalg/lanczos';
import type { CurvatureKind } from './operator';
import { curvatureOperator } from './operator';

/** What the tracker needs from a session (the optimizer's `Session` satisfies it). */
export interface SteppableSession {
  /** Current weights (read after every step; may be a live view). */
  readonly parameters: Float64Array;
  readonly objective: Objective;
  /** Applies n optimizer updates. */
  step(n: number): unknown;
  /** The fixed curvature rows, when the recipe draws them (undefined: full batch). */
  curvatureRows?(): Int32Array | undefined;
  /** Updates applied so far, when the session counts them. */
  readonly stepCount?: number;
}

/** One sharpness measurement. */
export interface SharpnessRecord {
  /** Session step of the measurement. */
  readonly step: number;
  readonly lambdaMax: number;
  readonly errorBound: number;
  /** Loss on the curvature rows at the measurement. */
  readonly loss: number;
  readonly products: number;
}

/** Options of {@link trackSharpness}. */
export interface TrackOptions extends IterationControl {
  /** Optimizer steps in total (default 100) and between measurements (default 10). */
  steps?: number;
  every?: number;
  /** Curvature rows (default: `session.curvatureRows()`, else the full batch), fixed for the run. */
  rows?: Rows;
  kind?: CurvatureKind;
  /** Lanczos tolerance (default 1e-8) and step cap (default 200). */
  tol?: number;
  maxIterations?: number;
  /** Called with every record as it is made. */
  onRecord?: (record: SharpnessRecord) => void;
}

/** The tracked sharpness. */
export interface SharpnessTrace {
  readonly records: SharpnessRecord[];
  /** The rows all measurements used (undefined: full batch). */
  readonly rows: Rows;
  readonly stop: StopReason;
}

/**
 * Steps `session` and records λmax on a fixed curvature batch at step 0 and after every `every`
 * steps (top-1 Lanczos, Golub & Van Loan 4th ed., §10.1; warm-started from the last eigenvector).
 *
 * @param rng - seeded generator for the first start vector.
 */
export function trackSharpness(session: SteppableSession, rng: Rng, options: TrackOptions = {}): SharpnessTrace {
  const steps = options.steps ?? 100;
  const every = options.every ?? 10;
  if (!Number.isInteger(every) || every < 1) throw new RangeError(`every must be a positive integer, got ${every}`);
  if (!Number.isInteger(steps) || steps < 0) throw new RangeError(`steps must be a non-negative integer, got ${steps}`);
  const rows = options.rows ?? session.curvatureRows?.();
  const records: SharpnessRecord[] = [];
  const lanczosRng = rng.fork('trajectory');
  let start: Float64Array | undefined;
  let done = 0;
  let stop: StopReason = 'converged';
  const base = session.stepCount ?? 0;
  for (;;) {
    if (stopRequested(options)) {
      stop = 'cancelled';
      break;
    }
    const w = Float64Array.from(session.parameters);
    const op = curvatureOperator(session.objective, w, { rows, kind: options.kind });
    const l = lanczosExtremes(op.apply, w.length, lanczosRng, {
      k: 1,
      tol: options.tol ?? 1e-8,
      maxIterations: options.maxIterations ?? 200,
      vectors: true,
      start,
      shouldStop: options.shouldStop,
    });
    if (l.stop === 'cancelled') {
      stop = 'cancelled';
      break;
    }
    const top = l.largest[0];
    start = top.vector ?? undefined;
    const rec: SharpnessRecord = { step: (session.stepCount ?? base + done), lambdaMax: top.value, errorBound: top.errorBound, loss: session.objective.value(w, rows), products: l.products };
    records.push(rec);
    options.onRecord?.(rec);
    if (reportProgress(options, { phase: 'trajectory', done, total: steps, products: records.reduce((s, r) => s + r.products, 0), detail: `λmax ${top.value.toPrecision(4)}` })) {
      stop = 'cancelled';
      break;
    }
    if (done >= steps) break;
    const n = Math.min(every, steps - done);
    session.step(n);
    done += n;
  }
  return { records, rows, stop };
}
