/**
 * Starts the engine's readout helper thread and turns it into a
 * {@link DensityTraceRunner}. Kept apart because `import.meta.url` is for the bundler only
 * (unit tests never load it). Where a worker cannot start another worker, or the helper fails,
 * the work runs in the engine's own thread instead (same numbers, one core).
 */
import type { Experiment } from '../core/setup';
import { buildObjective } from '../core/assemble';
import { runDensityTrace, type DensityTrace, type DensityTraceJob, type DensityTraceRunner, type StepMetricValue } from '../core/probe/curvature';
import type { ReadoutReply, ReadoutRequest } from './readout-protocol';

interface Pending {
  accepted: () => void;
  /** Settles the job's `stepMetric` (once; later calls do nothing). */
  stepMetric: (v: StepMetricValue | null) => void;
  resolve: (r: DensityTrace) => void;
  reject: (e: Error) => void;
}

/** A runner factory for `coreWith`: one lazily started helper per engine, reused for every readout. */
export function readoutHelper(): ((experiment: Experiment) => DensityTraceRunner) | undefined {
  if (typeof Worker === 'undefined') return undefined;
  let worker: Worker | null = null;
  let broken = false;
  let next = 1;
  const pending = new Map<number, Pending>();
  const fail = (message: string): void => {
    broken = true;
    for (const p of pending.values()) {
      p.accepted();
      p.stepMetric(null);
      p.reject(new Error(message));
    }
    pending.clear();
  };
  const start = (): Worker | null => {
    if (worker !== null || broken) return worker;
    try {
      worker = new Worker(new URL('./readout.worker.js', import.meta.url));
    } catch {
      broken = true;
      return null;
    }
    worker.onmessage = (event: MessageEvent<ReadoutReply>) => {
      const r = event.data;
      const p = pending.get(r.id);
      if (p === undefined) return;
      if (r.kind === 'accepted') {
        p.accepted();
        return;
      }
      if (r.kind === 'step-metric') {
        p.stepMetric(r.value);
        return;
      }
      pending.delete(r.id);
      p.stepMetric(r.ok ? r.result.stepMetric ?? null : null);
      if (r.ok) p.resolve({ ...r.result, elsewhere: true });
      else p.reject(new Error(`readout helper: ${r.message}`));
    };
    worker.onerror = (event: ErrorEvent) => {
      event.preventDefault();
      fail(`readout helper stopped: ${event.message}`);
    };
    return worker;
  };
  // A stopped readout's task is given up by ending the thread (its loop never looks at messages);
  // the next task starts a fresh one, so it does not queue behind the abandoned work.
  const cancel = (id: number): void => {
    const p = pending.get(id);
    if (p === undefined || worker === null) return;
    worker.terminate();
    worker = null;
    for (const other of pending.values()) {
      other.accepted();
      other.stepMetric(null);
      other.reject(new Error('readout helper: the readout was stopped'));
    }
    pending.clear();
  };
  return (experiment) =>
    (task): DensityTraceJob => {
      const w = start();
      if (w === null) {
        const result = Promise.resolve({ ...runDensityTrace(buildObjective(experiment.setup), task), elsewhere: false });
        return { started: Promise.resolve(), result, cancel: () => undefined };
      }
      const id = next++;
      const request: ReadoutRequest = { id, setup: experiment.setup, task };
      let accepted: () => void = () => undefined;
      const started = new Promise<void>((resolve) => (accepted = resolve));
      let stepMetricKnown: (v: StepMetricValue | null) => void = () => undefined;
      const stepMetric = new Promise<StepMetricValue | null>((resolve) => (stepMetricKnown = resolve));
      const result = new Promise<DensityTrace>((resolve, reject) => {
        pending.set(id, { accepted, stepMetric: stepMetricKnown, resolve, reject });
        w.postMessage(request);
      });
      // Nobody awaits a cancelled task's result: keep its rejection from being reported as unhandled.
      result.catch(() => undefined);
      return { started, result, stepMetric, cancel: () => cancel(id) };
    };
}
