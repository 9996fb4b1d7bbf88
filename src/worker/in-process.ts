/**
 * An engine port that runs the {@link EngineHost} in the same thread, copying every
 * message with `structuredClone` (moving transferred buffers) exactly as a Worker boundary would. Used by tests and
 * as a fallback where Workers are unavailable.
 */
import type { EngineCore } from './engine-core';
import { EngineHost } from './engine-host';
import type { EnginePort } from './client';
import type { EngineReply } from './protocol';

/**
 * Creates a port to a fresh in-process host.
 *
 * @param core - the numerics.
 * @param options - host options (e.g. `chunkMs`).
 */
export function inProcessPort(core: EngineCore, options: EngineHost.Options = {}): EnginePort & { host: EngineHost } {
  let listener: ((reply: EngineReply) => void) | null = null;
  let closed = false;
  const host = new EngineHost(core, reply => {
    if (!closed) listener?.(structuredClone(reply));
  }, options);
  return {
    host,
    postMessage(message, transfer) {
      // Transferred buffers are detached on the sending side, as a Worker boundary does.
      if (!closed) void host.receive(structuredClone(message, transfer === undefined ? undefined : { transfer }));
    },
    listen(l) {
      listener = l;
    },
    terminate() {
      closed = true;
    }
  };
}
