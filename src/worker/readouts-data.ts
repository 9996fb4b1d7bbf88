/**
 * A branch's readouts between the worker and the ledger: what is stored (the audit's entries
 * trimmed to the worst few, since the panels show per-layer rows and the sweep; the
 * initialization check without its activation health, which is stored once as the activation
 * health at step 0) and what is read back, with the fields the panels rely on checked so a
 * readout of another shape is left out instead of breaking a view. Findings are stored at the
 * ledger's top level, tagged with their branch; {@link findingsOf} reads them back.
 */
import type { DecodedReadouts, ReadoutsInput } from '../ledger';
import type { ActivationHealth } from '../core/probe/activation-health';
import type { InitCheck } from '../core/probe/init-check';
import type { DataReport } from '../core/probe/data-checks';
import type { NoiseScale } from '../core/probe/noise-scale';
import type { AuditResult, BranchReadouts, CurvatureResult, Finding, SharpnessPoint } from './protocol';
import { curvatureVerdict, emptyReadouts } from './diagnosis';
import { deeperFromLedger } from './deeper';
import { aboveLimit } from '../core/probe/curvature/verdicts';
import { offFanInRule } from '../core/probe/init-check';

/** Worst audit entries kept in the ledger. */
export const STORED_AUDIT_ENTRIES = 20;

/** What the ledger stores of a branch's readouts (derived readouts and findings are not among them). */
export function readoutsForLedger(r: BranchReadouts): ReadoutsInput {
  const audit = r.audit === null ? null : {
    step: r.audit.step,
    result: { ...r.audit.result, entries: r.audit.result.entries.slice().sort((a, b) => b.relError - a.relError).slice(0, STORED_AUDIT_ENTRIES) }
  };
  const activations = r.activations.start === null && r.activations.now === null ? null : {
    ...(r.activations.start === null ? {} : { start: r.activations.start }),
    ...(r.activations.now === null ? {} : { now: r.activations.now })
  };
  const init = r.init === null ? null : (({ health: _health, ...rest }) => rest)(r.init);
  return { curvature: r.curvature, sharpness: r.sharpness, audit, noise: r.noise, activations, init, data: r.data, deeper: r.deeper };
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
  const c = v as unknown as CurvatureResult;
  // The verdict is core's, from the stored bound (version-2 ledgers did not store it).
  return { ...c, ...curvatureVerdict(c.summary, c) };
}

function sharpnessOf(list: Obj[]): SharpnessPoint[] {
  return (list.filter(p => isInt(p.step) && has(p, { lambdaMax: 'number', sharpness: 'number', limit: 'number|null', preconditioned: 'boolean' })) as unknown as SharpnessPoint[])
    // The verdict is core's, never the stored one (ledgers before it was kept lack it).
    .map(p => ({ ...p, above: aboveLimit(p.sharpness, p.limit) }));
}

function auditOf(v: Obj | null): BranchReadouts['audit'] {
  if (v === null || !isInt(v.step) || !isObj(v.result)) return null;
  const r = v.result;
  if (!Array.isArray(r.layers) || !Array.isArray(r.sweep) || !Array.isArray(r.entries) || !has(r, { verdict: 'string', maxRelError: 'number', h: 'number', checked: 'number' })) return null;
  return { step: v.step, result: r as unknown as AuditResult };
}

function healthOf(v: unknown): ActivationHealth | null {
  if (!isObj(v) || !Array.isArray(v.layers) || !has(v, { rows: 'number', step: 'number|null' })) return null;
  const ok = v.layers.every(l => isObj(l) && isObj(l.histogram) && numbers(l.histogram.counts) && has(l, { layer: 'number', preMean: 'number', preSpread: 'number', activation: 'string' }));
  return ok ? (v as unknown as ActivationHealth) : null;
}

function initOf(v: Obj | null, start: ActivationHealth | null): InitCheck | null {
  if (v === null || start === null || !isObj(v.chosen) || !Array.isArray(v.alternatives) || !Array.isArray(v.chosen.layers)) return null;
  const stored = v as unknown as Omit<InitCheck, 'health'>;
  // The marking is core's, never the stored one (ledgers before it was kept lack it).
  const marked = (c: InitCheck['chosen']): InitCheck['chosen'] =>
    ({ ...c, layers: Array.isArray(c.layers) ? c.layers.map(l => ({ ...l, offRule: offFanInRule(l.ratio) })) : c.layers });
  return { ...stored, chosen: marked(stored.chosen), alternatives: stored.alternatives.map(marked), health: start };
}

function dataOf(v: Obj | null): DataReport | null {
  if (v === null || !Array.isArray(v.features) || !has(v, { rows: 'number', inputs: 'number', duplicateRows: 'number', standardized: 'boolean' })) return null;
  return v as unknown as DataReport;
}

function noiseOf(v: Obj | null): NoiseScale | null {
  if (v === null || !isInt(v.step) || !has(v, { sampleRows: 'number', noiseScale: 'number|null', batch: 'number', verdict: 'string' })) return null;
  return v as unknown as NoiseScale;
}

/**
 * The stored readouts of a decoded ledger branch with its findings, each left out (null, or the
 * item dropped) when its shape is not ours. The derived readouts are left empty: the caller
 * derives them from the trajectory.
 */
export function readoutsFromLedger(d: DecodedReadouts, findings: Finding[] = []): BranchReadouts {
  const start = isObj(d.activations) ? healthOf(d.activations.start) : null;
  const now = isObj(d.activations) ? healthOf(d.activations.now) : null;
  return {
    ...emptyReadouts(),
    curvature: curvatureOf(d.curvature),
    sharpness: sharpnessOf(d.sharpness),
    audit: auditOf(d.audit),
    noise: noiseOf(d.noise),
    activations: { start, now },
    init: initOf(d.init, start),
    data: dataOf(d.data),
    deeper: deeperFromLedger(d.deeper),
    findings
  };
}

const SEVERITIES: readonly string[] = ['problem', 'warning', 'info'];

/** The findings of one branch among a ledger's decoded top-level findings (without their tag; items of another shape dropped). */
export function findingsOf(all: readonly Obj[], branch: string): Finding[] {
  return all
    .filter(f => f.branch === branch && typeof f.id === 'string' && SEVERITIES.includes(f.severity as string) && typeof f.statement === 'string' && typeof f.source === 'string' &&
      typeof f.measured === 'number' && typeof f.threshold === 'number' && (f.proposal === null || (isObj(f.proposal) && isInt(f.proposal.atStep) && isObj(f.proposal.set))))
    .map(({ branch: _b, ...f }) => f as unknown as Finding);
}
