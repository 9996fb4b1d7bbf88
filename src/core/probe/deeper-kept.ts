/**
 * What a branch keeps of the deeper readouts — the latest complete result of each kind, taken at
 * a step of that branch — as plain data, and its read-back from a stored ledger with the fields
 * the figures and tables read checked (a result of another shape is left out, not drawn broken).
 * Shared by the worker (which keeps them), the page and the report (which draw them).
 */
import type { DeeperResult } from './readouts-at';

/** Kinds of deeper readout, in the order the panel lists them. */
export const DEEPER_KINDS = ['line', 'plane', 'range', 'precision', 'batch'] as const;

/** One kind of deeper readout. */
export type DeeperKind = (typeof DEEPER_KINDS)[number];

/** The latest complete result of each kind a branch keeps (absent kinds: never taken, or dropped with their steps). */
export type DeeperKept = { [K in DeeperKind]?: Extract<DeeperResult, { what: K }> };

type Obj = Record<string, unknown>;
const isObj = (v: unknown): v is Obj => typeof v === 'object' && v !== null && !Array.isArray(v);
const numbers = (v: unknown): boolean => Array.isArray(v) && v.every((x) => typeof x === 'number');

/** True when a stored result has the fields its figure or table reads. */
function wellShaped(what: DeeperKind, r: Obj): boolean {
  switch (what) {
    case 'line':
      return isObj(r.update) && numbers(r.update.t) && numbers(r.update.loss) && numbers(r.update.quadratic) && (r.eigenvector === undefined || (isObj(r.eigenvector) && numbers(r.eigenvector.t)));
    case 'plane':
      return numbers(r.alpha) && numbers(r.beta) && Array.isArray(r.loss) && r.loss.every(numbers) && isObj(r.path) && numbers(r.path.alpha) && numbers(r.path.beta);
    case 'range':
      return numbers(r.lr) && numbers(r.loss) && typeof r.startLoss === 'number';
    case 'precision':
      return Array.isArray(r.rows) && r.rows.every(isObj);
    case 'batch':
      return Array.isArray(r.runs) && r.runs.every((x) => isObj(x) && numbers(x.examples) && numbers(x.loss) && typeof x.batch === 'number');
  }
}

/** The deeper results of a decoded ledger branch, each left out when its shape is not ours. */
export function deeperFromLedger(v: unknown): DeeperKept {
  const out: DeeperKept = {};
  if (!isObj(v)) return out;
  for (const k of DEEPER_KINDS) {
    const r = v[k];
    if (isObj(r) && r.what === k && typeof r.step === 'number' && Number.isInteger(r.step) && r.step >= 0 && isObj(r.result) && wellShaped(k, r.result))
      (out as Record<string, unknown>)[k] = r;
  }
  return out;
}

