/**
 * An engine port that runs the {@link EngineHost} in the same thread, copying every
 * message with `structuredClone` exactly as a Worker boundary would. Used by tests and
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
    postMessage(message) {
      if (!closed) void host.receive(structuredClone(message));
    },
    listen(l) {
      listener = l;
    },
    terminate() {
      closed = true;
    }
  };
}
