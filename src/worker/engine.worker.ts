/**
 * The engine worker's entry: forwards every message to an {@link EngineHost} over the real
 * core and posts its replies back. All behaviour lives in the host.
 */
import { EngineHost } from './engine-host';
import { coreWith } from './core-adapter';
import { readoutHelper } from './readout-helper';

interface WorkerScope {
  postMessage(message: unknown): void;
  onmessage: ((event: MessageEvent) => void) | null;
}

const scope = self as unknown as WorkerScope;
// The curvature readout's density and trace run in a helper thread (the second core) when one starts.
const host = new EngineHost(coreWith(readoutHelper()), reply => scope.postMessage(reply));
scope.onmessage = (event: MessageEvent) => {
  void host.receive(event.data);
};
