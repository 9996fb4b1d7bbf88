/**
 * The one adapter between the cell controller and the ledger on the page. A stored ledger is
 * opened whole — validated, decoded and checked against its spec (`worker/ledger-view.ts`) — in
 * a worker ({@link workerLedgerGlue}): a ledger of 10⁶ parameters takes seconds to check, which
 * must not freeze the page. Only a walk for prototype keys runs on the page, because a worker
 * receives a structured clone in which a `__proto__` key that became a prototype is gone.
 * {@link ledgerGlue} does the same work in the calling thread (Node tests, the CLI's needs).
 * Ledgers are written by the worker (`worker/cell-grove.ts`).
 */
import { LEDGER_KEY as KEY, locate, prototypeProblem } from '../ledger';
import { jsonBytes, tooLargeMessage } from '../ledger/size';
import type { SpecLimits } from '../experiment/limits';
import type { EngineClient } from '../worker/client';
import { viewLedger, type LedgerViewResult } from '../worker/ledger-view';
import type { LedgerGlue, LedgerRead } from './ports';

/** Our metadata key on a stepwell cell. */
export const LEDGER_KEY = KEY;

/** A reader's verdict as the controller takes it. */
function toRead(value: unknown, r: LedgerViewResult): LedgerRead {
  if (!r.ok) return { kind: 'corrupt', message: r.message, specText: r.specText, problems: r.problems };
  return { kind: 'ok', content: { ...r.view, raw: value as object } };
}

/** A prototype key in the value as the page holds it, as a verdict; undefined when there is none. */
function pageProblem(value: unknown): LedgerRead | undefined {
  const proto = prototypeProblem(value);
  if (proto === undefined) return undefined;
  const p = locate(value, proto.field, proto.detail);
  return { kind: 'corrupt', message: p.message, specText: typeof (value as { spec?: unknown }).spec === 'string' ? (value as { spec: string }).spec : undefined, problems: [p] };
}

/** A ledger above `maxBytes` as a verdict (counted without serializing it); undefined when it fits. */
function sizeProblem(value: unknown, maxBytes: number | undefined): LedgerRead | undefined {
  if (maxBytes === undefined) return undefined;
  const bytes = jsonBytes(value);
  if (bytes <= maxBytes) return undefined;
  const message = tooLargeMessage(bytes, maxBytes);
  return { kind: 'corrupt', message, problems: [{ message, field: 'ledger', detail: message }] };
}

function read(value: unknown, limits?: SpecLimits, maxBytes?: number): LedgerRead {
  if (value === undefined || value === null) return { kind: 'absent' };
  return sizeProblem(value, maxBytes) ?? pageProblem(value) ?? toRead(value, viewLedger(value, limits));
}

/** The ledger glue that reads in the calling thread. */
export const ledgerGlue: LedgerGlue = { read };

/**
 * The ledger glue of the notebook app: the reading runs in `reader()`'s worker (`open`
 * request). A worker failure is reported as an unreadable ledger with its message.
 */
export function workerLedgerGlue(reader: () => EngineClient): LedgerGlue {
  return {
    read: async (value: unknown, limits?: SpecLimits, maxBytes?: number): Promise<LedgerRead> => {
      if (value === undefined || value === null) return { kind: 'absent' };
      // Too large: refused before the worker gets a copy of it.
      const early = sizeProblem(value, maxBytes) ?? pageProblem(value);
      if (early !== undefined) return early;
      const reply = await reader().request({ kind: 'open', ledger: value, ...(limits !== undefined ? { limits } : {}) });
      if (reply.kind === 'opened') return toRead(value, reply.result);
      const message = reply.kind === 'failed' ? reply.message : `unexpected reply '${reply.kind}'`;
      return { kind: 'corrupt', message: `the ledger could not be read: ${message}` };
    }
  };
}
