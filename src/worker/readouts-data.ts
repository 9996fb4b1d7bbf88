/**
 * A branch's readouts between the worker and the ledger: what is stored (the audit's entries
 * trimmed to the worst few, since the panels show per-layer rows and the sweep) and what is read
 * back, with the fields the panels rely on checked so a readout of another shape is left out
 * instead of breaking a view.
 */
import type { DecodedReadouts, ReadoutsInput } from '../ledger';
import type { AuditResult, BranchReadouts, CurvatureResult, SharpnessPoint } from './protocol';

/** Worst audit entries kept in the ledger. */
export const STORED_AUDIT_ENTRIES = 20;

/** What the ledger stores of a branch's readouts. */
export function readoutsForLedger(r: BranchReadouts): ReadoutsInput {
  const audit = r.audit === null ? null : {
    step: r.audit.step,
    result: { ...r.audit.result, entries: r.audit.result.entries.slice().sort((a, b) => b.relError - a.relError).slice(0, STORED_AUDIT_ENTRIES) }
  };
  return { curvature: r.curvature, sharpness: r.sharpness, audit };
}

type Obj = Record<string, unknown>;
const isObj = (v: unknown): v is Obj => typeof v === 'object' && v !== null && !Array.isArray(v);
const isInt = (v: unknown): v is number => typeof v === 'number' && Number.isInteger(v) && v >= 0;
const numbers = (v: unknown): boolean => Array.isArray(v) && v.every(x => typeof x === 'number');
const has = (o: Obj, types: Record<string, string>): boolean =>
  Object.entries(types).every(([k, t]) => (t === 'number|null' ? o[k] === null || typeof o[k] === 'number' : typeof o[k] === t));

function curvatureOf(v: Obj | null): CurvatureResult | null {
  if (v === null || !isInt(v.step) || !numbers(v.top) || !numbers(v.bottom) || !numbers(v.topBounds) || !numbers(v.bottomBounds)) return null;
  if (!has(v, { method: 'string', parameterCount: 'number', products: 'number', stop: 'string' }) || !isObj(v.summary)) return null;
  const s = v.summary;
  if (!isObj(s.stability) || !has(s, { lambdaMax: 'number', caveat: 'string' })) return null;
  return v as unknown as CurvatureResult;
}

function sharpnessOf(list: Obj[]): SharpnessPoint[] {
  return list.filter(p => isInt(p.step) && has(p, { lambdaMax: 'number', sharpness: 'number', limit: 'number|null', preconditioned: 'boolean' })) as unknown as SharpnessPoint[];
}

function auditOf(v: Obj | null): BranchReadouts['audit'] {
  if (v === null || !isInt(v.step) || !isObj(v.result)) return null;
  const r = v.result;
  if (!Array.isArray(r.layers) || !Array.isArray(r.sweep) || !Array.isArray(r.entries) || !has(r, { verdict: 'string', maxRelError: 'number', h: 'number', checked: 'number' })) return null;
  return { step: v.step, result: r as unknown as AuditResult };
}

/** The readouts of a decoded ledger branch, each left out (null, or the point dropped) when its shape is not ours. */
export function readoutsFromLedger(d: DecodedReadouts): BranchReadouts {
  return { curvature: curvatureOf(d.curvature), sharpness: sharpnessOf(d.sharpness), audit: auditOf(d.audit) };
}
