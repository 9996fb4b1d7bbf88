/**
 * Starts the engine's readout helper thread and turns it into a
 * {@link DensityTraceRunner}. Kept apart because `import.meta.url` is for the bundler only
 * (unit tests never load it). Where a worker cannot start another worker, or the helper fails,
 * the work runs in the engine's own thread instead (same numbers, one core).
 */
import type { Experiment } from '../core/setup';
import { buildObjective } from '../core/assemble';
import { runDensityTrace, type DensityTrace, type DensityTraceRunner } from '../core/probe/curvature';
import type { ReadoutReply, ReadoutRequest } from './readout-protocol';

/** A runner factory for `coreWith`: one lazily started helper per engine, reused for every readout. */
export function readoutHelper(): ((experiment: Experiment) => DensityTraceRunner) | undefined {
  if (typeof Worker === 'undefined') return undefined;
  let worker: Worker | null = null;
  let broken = false;
  let next = 1;
  const pending = new Map<number, { resolve: (r: DensityTrace) => void; reject: (e: Error) => void }>();
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
      pending.delete(r.id);
      if (p === undefined) return;
      if (r.ok) p.resolve({ ...r.result, elsewhere: true });
      else p.reject(new Error(`readout helper: ${r.message}`));
    };
    worker.onerror = (event: ErrorEvent) => {
      event.preventDefault();
      broken = true;
      for (const p of pending.values()) p.reject(new Error(`readout helper stopped: ${event.message}`));
      pending.clear();
    };
    return worker;
  };
  return (experiment) => (task) => {
    const w = start();
    if (w === null) return Promise.resolve({ ...runDensityTrace(buildObjective(experiment.setup), task), elsewhere: false });
    const id = next++;
    const request: ReadoutRequest = { id, setup: experiment.setup, task };
    return new Promise<DensityTrace>((resolve, reject) => {
      pending.set(id, { resolve, reject });
      w.postMessage(request);
    });
  };
}
