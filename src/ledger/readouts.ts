/**
 * Readouts kept per branch in the ledger: the latest curvature measurement, the sharpness trace
 * and the latest gradient audit (version 2), and the diagnosis readouts (version 3: the gradient
 * noise scale, activation health at step 0 and at the cursor, the initialization check and the
 * data checks), so a reopened notebook shows them without recomputing. The findings themselves
 * live at the ledger's top level, tagged with their branch (see {@link encodeFindings}). Their shapes belong to the readouts (the worker types them); the ledger keeps
 * them as plain JSON with every number exact, bounded in size, and guarded by a digest.
 *
 * Exact JSON ("loose" encoding): a finite number other than -0 stays a number; any other number
 * becomes `"f64:"` + 16 hex digits of its bits (as {@link encodeScalar}); a string that starts
 * with `f64:` or `~` gets a `~` in front, so decoding is unambiguous.
 */
import { aboveLimit } from '../core/probe/curvature/verdicts';
import { decodeScalar, encodeScalar } from './codec';
import { sha256Hex } from './hash';
import { LedgerError } from './types';
import type { LedgerReadouts } from './types';

/** Most sharpness points kept per branch (thinned by a power-of-two stride of steps beyond it). */
export const MAX_SHARPNESS_POINTS = 512;
/** Most UTF-8 bytes of one encoded readout (curvature, the sharpness trace, audit, noise, activations, init, data). */
export const MAX_READOUT_BYTES = 256 * 1024;
/** Most findings kept per branch (a rule fires at most once per layer; more means something is wrong). */
export const MAX_FINDINGS_PER_BRANCH = 64;

/** The version-3 readouts, in digest order after the version-2 three. */
const DIAGNOSIS_KEYS = ['noise', 'activations', 'init', 'data'] as const;
/** The deeper readouts, hashed after the diagnosis readouts only when present (so earlier digests stay valid). */
const DEEPER_KEY = 'deeper';
type DiagnosisKey = (typeof DIAGNOSIS_KEYS)[number];

/**
 * Plain readouts of one branch, as the worker holds them (numbers may be non-finite). Each
 * value is a plain object with an integer `step` (checked by the schema after encoding).
 */
export interface ReadoutsInput {
  curvature?: object | null;
  sharpness?: readonly object[];
  audit?: object | null;
  noise?: object | null;
  activations?: object | null;
  init?: object | null;
  data?: object | null;
  /** The latest deeper readout of each kind (`{line?, plane?, range?, precision?, batch?}`, each with a `step`). */
  deeper?: object | null;
}

/** Decoded readouts: plain values with exact numbers; the worker checks their shapes. */
export interface DecodedReadouts {
  curvature: Record<string, unknown> | null;
  sharpness: Record<string, unknown>[];
  audit: Record<string, unknown> | null;
  noise: Record<string, unknown> | null;
  activations: Record<string, unknown> | null;
  init: Record<string, unknown> | null;
  data: Record<string, unknown> | null;
  /** The deeper readouts (absent or null: none kept). */
  deeper?: Record<string, unknown> | null;
}

const isObj = (v: unknown): v is Record<string, unknown> => typeof v === 'object' && v !== null && !Array.isArray(v);

/** Encodes a plain value exactly (see the module comment); refuses what JSON cannot hold. */
export function encodeLoose(v: unknown, field: string): unknown {
  if (v === null || typeof v === 'boolean') return v;
  if (typeof v === 'number') return encodeScalar(v);
  if (typeof v === 'string') return v.startsWith('f64:') || v.startsWith('~') ? `~${v}` : v;
  if (Array.isArray(v)) return v.map((x, i) => encodeLoose(x, `${field}[${i}]`));
  if (isObj(v) && Object.getPrototypeOf(v) === Object.prototype) {
    const out: Record<string, unknown> = {};
    for (const [k, x] of Object.entries(v)) if (x !== undefined) out[k] = encodeLoose(x, `${field}.${k}`);
    return out;
  }
  throw new LedgerError(field, `is ${typeof v === 'object' ? 'a class instance or typed array' : typeof v}, which is not plain JSON`);
}

/** Inverse of {@link encodeLoose}. */
export function decodeLoose(v: unknown, field: string): unknown {
  if (v === null || typeof v === 'boolean') return v;
  if (typeof v === 'number') return decodeScalar(v, field);
  if (typeof v === 'string') {
    if (v.startsWith('f64:')) return decodeScalar(v, field);
    return v.startsWith('~') ? v.slice(1) : v;
  }
  if (Array.isArray(v)) return v.map((x, i) => decodeLoose(x, `${field}[${i}]`));
  if (isObj(v)) {
    const out: Record<string, unknown> = {};
    for (const [k, x] of Object.entries(v)) out[k] = decodeLoose(x, `${field}.${k}`);
    return out;
  }
  throw new LedgerError(field, `is ${typeof v}, which a readout cannot hold`);
}

/**
 * JSON text with every object's keys in sorted order: the same for the same values however a
 * tool reorders keys on saving (nbformat writes notebooks with sorted keys).
 */
export function canonicalJson(v: unknown): string {
  if (Array.isArray(v)) return `[${v.map(canonicalJson).join(',')}]`;
  if (isObj(v)) {
    const keys = Object.keys(v).filter((k) => v[k] !== undefined).sort();
    return `{${keys.map((k) => `${JSON.stringify(k)}:${canonicalJson(v[k])}`).join(',')}}`;
  }
  return JSON.stringify(v) ?? 'null';
}

/**
 * SHA-256 hex over the encoded readouts in a fixed order, keys sorted; reveals hand edits. The
 * version-2 three come first as version 2 hashed them; the version-3 readouts are appended only
 * when one is present, so a version-2 digest stays valid after migration.
 */
export function readoutsDigest(r: Omit<LedgerReadouts, 'digest'> | Record<string, unknown>): string {
  const o = r as Record<string, unknown>;
  const extra = DIAGNOSIS_KEYS.some((k) => o[k] !== undefined) || o[DEEPER_KEY] !== undefined ? `;${canonicalJson(DIAGNOSIS_KEYS.map((k) => o[k] ?? null))}` : '';
  const deeper = o[DEEPER_KEY] === undefined ? '' : `;deeper;${canonicalJson(o[DEEPER_KEY])}`;
  return sha256Hex(`stepwell-readouts-v1;${canonicalJson([o.curvature ?? null, o.sharpness ?? null, o.audit ?? null])}${extra}${deeper}`);
}

/**
 * The sharpness points to keep: all up to `cap`; beyond it the first, the last, the first one
 * above its limit (when a point has `sharpness` and `limit` fields) and those whose step is a
 * multiple of the smallest power-of-two stride that brings the count to at most `cap`.
 */
export function capSharpness<T extends { step: number }>(points: readonly T[], cap = MAX_SHARPNESS_POINTS): T[] {
  if (points.length <= cap) return points.slice();
  const crossing = points.findIndex((p) => {
    const q = p as unknown as { sharpness?: unknown; limit?: unknown };
    return typeof q.sharpness === 'number' && typeof q.limit === 'number' && aboveLimit(q.sharpness, q.limit);
  });
  const must = (i: number): boolean => i === 0 || i === points.length - 1 || i === crossing;
  const last = points[points.length - 1].step;
  for (let stride = 1; ; stride *= 2) {
    const kept = points.filter((p, i) => must(i) || p.step % stride === 0);
    if (kept.length <= cap || stride > last) return kept;
  }
}

function sized(value: unknown, field: string): unknown {
  const bytes = new TextEncoder().encode(JSON.stringify(value)).length;
  if (bytes > MAX_READOUT_BYTES) throw new LedgerError(field, `takes ${bytes} bytes, more than the ${MAX_READOUT_BYTES} a ledger keeps per readout`);
  return value;
}

/**
 * Encodes a branch's readouts (sharpness capped at {@link MAX_SHARPNESS_POINTS}), or returns
 * undefined when there is nothing to keep.
 * @throws LedgerError naming the field when a readout is not plain data or too large.
 */
export function encodeReadouts(r: ReadoutsInput | undefined): LedgerReadouts | undefined {
  if (r === undefined) return undefined;
  const out: Omit<LedgerReadouts, 'digest'> = {};
  if (r.curvature) out.curvature = sized(encodeLoose(r.curvature, 'readouts.curvature'), 'readouts.curvature') as Record<string, unknown>;
  if (r.sharpness && r.sharpness.length > 0) out.sharpness = sized(encodeLoose(capSharpness(r.sharpness as readonly { step: number }[]), 'readouts.sharpness'), 'readouts.sharpness') as Record<string, unknown>[];
  if (r.audit) out.audit = sized(encodeLoose(r.audit, 'readouts.audit'), 'readouts.audit') as Record<string, unknown>;
  for (const k of DIAGNOSIS_KEYS) {
    const v = r[k];
    if (v) out[k] = sized(encodeLoose(v, `readouts.${k}`), `readouts.${k}`) as Record<string, unknown>;
  }
  if (r.deeper && Object.keys(r.deeper).length > 0) {
    const d: Record<string, unknown> = {};
    // each kind is sized on its own: one large plane never takes the others' room
    for (const [k, v] of Object.entries(r.deeper)) if (v) d[k] = sized(encodeLoose(v, `readouts.deeper.${k}`), `readouts.deeper.${k}`);
    out.deeper = d;
  }
  if (Object.keys(out).length === 0) return undefined;
  return { digest: readoutsDigest(out), ...out };
}

/**
 * Decodes stored readouts, checking the digest first (unless `verifyDigest` is false: a
 * verification that reports the edit and reads on).
 * @throws LedgerError naming the field.
 */
export function decodeReadouts(r: LedgerReadouts | undefined, field: string, verifyDigest = true): DecodedReadouts {
  const one = (k: 'curvature' | 'audit' | DiagnosisKey): Record<string, unknown> | null =>
    r?.[k] === undefined ? null : (decodeLoose(r[k], `${field}.${k}`) as Record<string, unknown>);
  if (r !== undefined && verifyDigest && r.digest !== readoutsDigest(r)) throw new LedgerError(`${field}.digest`, 'does not match the readouts (they were edited or damaged)');
  return {
    curvature: one('curvature'),
    sharpness: r?.sharpness === undefined ? [] : (decodeLoose(r.sharpness, `${field}.sharpness`) as Record<string, unknown>[]),
    audit: one('audit'),
    noise: one('noise'),
    activations: one('activations'),
    init: one('init'),
    data: one('data'),
    deeper: r?.deeper === undefined ? null : (decodeLoose(r.deeper, `${field}.deeper`) as Record<string, unknown>)
  };
}

/**
 * Encodes the findings of every branch for the ledger's top level: each a plain object with a
 * `branch` field (the caller tags them), numbers exact (a non-finite `measured` survives), at
 * most {@link MAX_FINDINGS_PER_BRANCH} per branch (the first ones: rules list the most severe first).
 * @throws LedgerError naming the finding when one is not plain data or has no branch.
 */
export function encodeFindings(findings: readonly Record<string, unknown>[]): Record<string, unknown>[] {
  const perBranch = new Map<string, number>();
  const out: Record<string, unknown>[] = [];
  findings.forEach((f, i) => {
    if (typeof f.branch !== 'string' || f.branch === '') throw new LedgerError(`findings[${i}].branch`, `must name the finding's branch, got ${JSON.stringify(f.branch) ?? 'nothing'}`);
    const n = perBranch.get(f.branch) ?? 0;
    if (n >= MAX_FINDINGS_PER_BRANCH) return;
    perBranch.set(f.branch, n + 1);
    out.push(encodeLoose(f, `findings[${i}]`) as Record<string, unknown>);
  });
  return out;
}

/**
 * Decodes the top-level findings (inverse of {@link encodeFindings}).
 * @throws LedgerError naming the finding.
 */
export function decodeFindings(findings: readonly Record<string, unknown>[]): Record<string, unknown>[] {
  return findings.map((f, i) => decodeLoose(f, `findings[${i}]`) as Record<string, unknown>);
}
