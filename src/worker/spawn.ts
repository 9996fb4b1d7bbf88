/**
 * Starts an engine in a Web Worker and returns its client. Kept apart from the rest of the
 * worker folder because `import.meta.url` is for the bundler only (unit tests never load it).
 * The URL names the compiled `.js`: the prebuilt extension bundles `lib/`, and the embedded
 * app's webpack maps `.js` back to the `.ts` source (`resolve.extensionAlias`).
 */
import { EngineClient } from './client';
import type { EngineReply } from './protocol';

/** Starts a new engine worker (one per stepwell cell). */
export function spawnEngine(): EngineClient {
  const worker = new Worker(new URL('./engine.worker.js', import.meta.url));
  return new EngineClient({
    postMessage: (message, transfer) => worker.postMessage(message, transfer ?? []),
    listen: listener => {
      worker.onmessage = (event: MessageEvent<EngineReply>) => listener(event.data);
      worker.onerror = (event: ErrorEvent) => {
        event.preventDefault();
        // A crashed worker cannot answer; report it on every pending request id.
        listener({ id: -1, kind: 'failed', message: `engine worker error: ${event.message}` });
      };
    },
    terminate: () => worker.terminate()
  });
}
