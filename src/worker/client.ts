/**
 * The page side of the engine protocol: one promise per request, progress callbacks, stop.
 * Works over anything with `postMessage` and a message listener (a `Worker`, or an
 * in-process loop to an {@link EngineHost} in tests).
 */
import type { EngineReply, EngineRequest } from './protocol';

/** Distributes `Omit` over a union, so each request kind keeps its own fields. */
type DistributiveOmit<T, K extends PropertyKey> = T extends unknown ? Omit<T, K> : never;

/** A request without its id (the client assigns ids). */
export type RequestBody = DistributiveOmit<Exclude<EngineRequest, { kind: 'stop' }>, 'id'>;

/** The final reply to a request of kind `K`... or a failure. */
export type FinalReply = Exclude<EngineReply, { kind: 'progress' }>;

/** Progress reply payload. */
export type ProgressReply = Extract<EngineReply, { kind: 'progress' }>;

/** The minimal port the client talks through. */
export interface EnginePort {
  /** Posts a request; the buffers in `transfer` move to the engine (they are detached here, never copied). */
  postMessage(message: EngineRequest, transfer?: ArrayBuffer[]): void;
  /** Registers the single reply listener. */
  listen(listener: (reply: EngineReply) => void): void;
  /** Ends the worker (optional). */
  terminate?(): void;
}

interface Pending {
  resolve: (reply: FinalReply) => void;
  onProgress?: (p: ProgressReply) => void;
}

/** Sends requests and matches replies by id. */
export class EngineClient {
  private readonly port: EnginePort;
  private nextId = 1;
  private readonly pending = new Map<number, Pending>();
  private disposed = false;

  /** @param port - the channel to the engine host. */
  constructor(port: EnginePort) {
    this.port = port;
    port.listen(reply => this.onReply(reply));
  }

  /** Ids of requests still waiting for their final reply, oldest first. */
  get inFlight(): number[] {
    return [...this.pending.keys()];
  }

  /**
   * Sends one request.
   *
   * @param body - the request without id.
   * @param onProgress - called for each progress reply.
   * @param transfer - buffers of the request that move to the engine instead of being copied
   *   (file bytes); they are unusable on this side afterwards.
   * @returns the final reply (`failed` included; the promise never rejects for engine errors).
   */
  request(body: RequestBody, onProgress?: (p: ProgressReply) => void, transfer?: ArrayBuffer[]): Promise<FinalReply> {
    if (this.disposed) return Promise.resolve({ id: -1, kind: 'failed', message: 'the engine was shut down' });
    const id = this.nextId++;
    return new Promise<FinalReply>(resolve => {
      this.pending.set(id, { resolve, onProgress });
      this.port.postMessage({ ...body, id } as EngineRequest, transfer);
    });
  }

  /** Asks the engine to end the request `target` early (default: every request in flight). */
  stop(target?: number): void {
    const targets = target === undefined ? this.inFlight : [target];
    for (const t of targets) this.port.postMessage({ id: this.nextId++, kind: 'stop', target: t });
  }

  /** Terminates the engine; requests in flight resolve as `failed`. Idempotent. */
  dispose(): void {
    if (this.disposed) return;
    this.disposed = true;
    this.port.terminate?.();
    for (const [id, p] of this.pending) p.resolve({ id, kind: 'failed', message: 'the engine was shut down' });
    this.pending.clear();
  }

  private onReply(reply: EngineReply): void {
    if (reply.id === -1 && reply.kind === 'failed') {
      // A fault not tied to one request (a crashed worker): every waiting request fails with it.
      for (const [id, p] of this.pending) p.resolve({ id, kind: 'failed', message: reply.message });
      this.pending.clear();
      return;
    }
    const p = this.pending.get(reply.id);
    if (p === undefined) return;
    if (reply.kind === 'progress') {
      p.onProgress?.(reply);
      return;
    }
    this.pending.delete(reply.id);
    p.resolve(reply);
  }
}
