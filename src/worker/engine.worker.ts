/**
 * The engine worker's entry: forwards every message to an {@link EngineHost} over the real
 * core and posts its replies back. All behaviour lives in the host.
 */
import { EngineHost } from './engine-host';
import { realCore } from './core-adapter';

interface WorkerScope {
  postMessage(message: unknown): void;
  onmessage: ((event: MessageEvent) => void) | null;
}

const scope = self as unknown as WorkerScope;
const host = new EngineHost(realCore, reply => scope.postMessage(reply));
scope.onmessage = (event: MessageEvent) => {
  void host.receive(event.data);
};
