/**
 * The deeper readouts taken at a session's current state: what the CLI and the engine worker
 * call. Each readout draws from its own generator (the caller forks it from the seed), never
 * from the session's, so measuring never shifts the trajectory; the range test runs on a
 * throwaway fork.
 */
import { Session } from '../session/live';
import { Network } from '../model/network';
import { topEigendirections } from './directions';
import { lineReadout, type LineOptions, type LineReadout } from './line';
import { planeDirections, planeReadout, planeTask, type PlaneKind, type PlaneOptions, type PlaneReadout } from './slice';
import { rangeTest, rangeTestTask, type RangeTestOptions, type RangeTestResult } from './range-test';
import { precisionReadout, PRECISION_BITS, type PrecisionReadout } from './precision';
import { sharpnessPoint } from './findings/gather';
import { batchCompareTask } from './batch-compare';
import type { SharpnessPoint } from './findings/evidence';
import { Rng } from '../rng';
import { mapTask, UnitTask, type StoppableTask } from './unit-task';
import type { BatchComparison } from './batch-compare';

/** The update the session would apply next (Δw = w_{k+1} − w_k), from a throwaway fork. */
export function peekUpdate(session: Session): Float64Array {
  const fork = Session.restore(session.experiment, session.state(), { objective: session.objective });
  const before = Float64Array.from(fork.parameters);
  fork.step(1);
  const after = fork.parameters;
  return Float64Array.from(before, (w, i) => after[i] - w);
}

/** The line readout at the session's weights: along its next update and its top Hessian eigenvector. */
export function lineAt(session: Session, rng: Rng, options: LineOptions = {}): LineReadout {
  const w = Float64Array.from(session.parameters);
  const update = peekUpdate(session);
  const [top] = topEigendirections(session.objective, w, 1, rng.fork('lanczos'), session.curvatureRows());
  return lineReadout(session.objective, w, session.stepCount, update, top && top.value > 0 ? top : null, options);
}

/**
 * The plane readout at the session's weights, with `path` (weights at earlier steps of the
 * branch, e.g. its checkpoints) projected onto it. Null when `options.onRow` stopped it.
 */
export function planeAt(session: Session, kind: PlaneKind, rng: Rng, path: { steps: number[]; weights: readonly Float64Array[] }, options: PlaneOptions = {}): PlaneReadout | null {
  const w = Float64Array.from(session.parameters);
  const d = planeDirections(session.objective, w, kind, rng, session.curvatureRows());
  return planeReadout(session.objective, w, session.stepCount, kind, d, path, options);
}

/** The range test from the session's state, with the recipe's stability limit at the current sharpness beside it. */
export function rangeTestAt(session: Session, rng: Rng, options: RangeTestOptions = {}): RangeTestAtResult {
  const limit = sharpnessPoint(session, rng.fork('sharpness'));
  const r = rangeTest(session.experiment, session.state(), session.objective, options);
  const bound = limit?.largestStableLr ?? null;
  return { ...r, limit, beyondLimit: bound !== null && r.suggested !== null && r.suggested.high > bound };
}

/** The range test with the recipe's stability limit at the current sharpness. */
export interface RangeTestAtResult extends RangeTestResult {
  limit: SharpnessPoint | null;
  /**
   * True when the suggested range reaches past the stability limit: one update per rate can
   * leave a nearly converged sharp direction too small to show its growth, so the range test's
   * upper end is then not a safe constant rate.
   */
  beyondLimit: boolean;
}

/** Precision tolerance at the session's weights (accuracy too for the classification losses). */
export function precisionAt(session: Session, bits: readonly number[] = PRECISION_BITS): PrecisionReadout {
  const { setup } = session.experiment;
  const net = session.objective instanceof Network ? session.objective : null;
  const classify = net && setup.data && setup.loss !== 'mse' ? { predictor: net, y: setup.data.y, loss: setup.loss } : undefined;
  return precisionReadout(session.objective, session.parameters, session.stepCount, bits, classify);
}

/** What the cell asks for: one deeper readout and its options. */
export type DeeperRequest =
  | { what: 'line'; points?: number }
  | { what: 'plane'; directions: PlaneKind; points?: number }
  | { what: 'range'; from?: number; to?: number; steps?: number }
  | { what: 'precision'; bits?: readonly number[] }
  | { what: 'batch'; sizes: readonly number[]; examples: number };

/** A deeper readout taken at one step of a branch (plain data: it crosses the Worker boundary and can be stored). */
export type DeeperResult =
  | { what: 'line'; step: number; result: LineReadout }
  | { what: 'plane'; step: number; result: PlaneReadout }
  | { what: 'range'; step: number; result: RangeTestAtResult }
  | { what: 'precision'; step: number; result: PrecisionReadout }
  | { what: 'batch'; step: number; result: BatchComparison };

/**
 * One deeper readout at the session's state as a resumable task (the engine worker runs it in
 * slices with progress and Stop; a stopped task's result is null). The generator is the seed's
 * `<what>-<step>` fork, like the cell's audit and curvature, so a repeat gives the same numbers.
 * `path` (weights at earlier steps of the branch) is projected onto the plane.
 */
export function deeperTask(session: Session, request: DeeperRequest, path: { steps: number[]; weights: readonly Float64Array[] } = { steps: [], weights: [] }): StoppableTask<DeeperResult | null> {
  const step = session.stepCount;
  const rng = Rng.fromSeed(session.experiment.seed).fork(`${request.what}-${step}`);
  // a function declaration, not a generic arrow: the app's bundler reads .ts files as TSX
  function once<T>(make: () => T): UnitTask<T | null> {
    let value: T | null = null;
    return new UnitTask<T | null>(1, () => { value = make(); return false; }, (stopped) => (stopped ? null : value));
  }
  switch (request.what) {
    case 'line':
      return once(() => ({ what: 'line', step, result: lineAt(session, rng, { points: request.points }) }));
    case 'precision':
      return once(() => ({ what: 'precision', step, result: precisionAt(session, request.bits) }));
    case 'plane': {
      const w = Float64Array.from(session.parameters);
      const d = planeDirections(session.objective, w, request.directions, rng, session.curvatureRows());
      const t = planeTask(session.objective, w, step, request.directions, d, path, { points: request.points });
      return mapTask(t, (r) => (r === null ? null : { what: 'plane', step, result: r }));
    }
    case 'range': {
      const limit = sharpnessPoint(session, rng.fork('sharpness'));
      const t = rangeTestTask(session.experiment, session.state(), session.objective, request);
      const bound = limit?.largestStableLr ?? null;
      return mapTask(t, (r): DeeperResult => ({ what: 'range', step, result: { ...r, limit, beyondLimit: bound !== null && r.suggested !== null && r.suggested.high > bound } }));
    }
    case 'batch': {
      const t = batchCompareTask(session.experiment, session.state(), session.objective, request.sizes, request.examples, rng);
      return mapTask(t, (r) => (r === null ? null : { what: 'batch', step, result: r }));
    }
    default: {
      const never: never = request;
      throw new Error(`unknown readout ${JSON.stringify(never)}`);
    }
  }
}
