/**
 * A second thread for the engine's readouts: it builds its own copy of the experiment's
 * objective and runs the parts of a curvature readout that do not wait for Lanczos (the step
 * metric's sharpness, the spectral density and the trace, `core/probe/curvature/parts.ts`), while the engine worker
 * runs Lanczos. Messages are plain data (copied, no shared memory), so it needs no
 * cross-origin isolation.
 */
import { buildObjective } from '../core/assemble';
import { runDensityTrace, type StepMetricValue } from '../core/probe/curvature';
import type { ReadoutRequest, ReadoutReply } from './readout-protocol';

interface WorkerScope {
  postMessage(message: unknown): void;
  onmessage: ((event: MessageEvent) => void) | null;
}

const scope = self as unknown as WorkerScope;

scope.onmessage = (event: MessageEvent<ReadoutRequest>) => {
  const { id, setup, task } = event.data;
  const accepted: ReadoutReply = { id, kind: 'accepted' };
  scope.postMessage(accepted);
  let reply: ReadoutReply;
  try {
    // Built afresh per readout: the setup arrives as a copy, and building is cheap next to the products.
    const early = (value: StepMetricValue | null): void => {
      const message: ReadoutReply = { id, kind: 'step-metric', value };
      scope.postMessage(message);
    };
    reply = { id, kind: 'done', ok: true, result: runDensityTrace(buildObjective(setup), task, early) };
  } catch (e) {
    reply = { id, kind: 'done', ok: false, message: (e as Error).message };
  }
  scope.postMessage(reply);
};
