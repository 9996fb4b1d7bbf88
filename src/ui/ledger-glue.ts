/**
 * The one adapter between the cell controller and the ledger on the page: validates a metadata
 * value and describes it (the worker folder's `ledger-view.ts`) into the controller's
 * {@link LedgerContent}. Ledgers are written by the worker (`worker/cell-grove.ts`).
 */
import { LEDGER_KEY as KEY } from '../ledger';
import { viewLedger } from '../worker/ledger-view';
import type { LedgerGlue, LedgerRead } from './ports';

/** Our metadata key on a stepwell cell. */
export const LEDGER_KEY = KEY;

function read(value: unknown): LedgerRead {
  if (value === undefined || value === null) return { kind: 'absent' };
  const r = viewLedger(value);
  if (!r.ok) return { kind: 'corrupt', message: r.message, specText: r.specText };
  return { kind: 'ok', content: { ...r.view, raw: value as object } };
}

/** The ledger glue the plugin uses. */
export const ledgerGlue: LedgerGlue = { read };
