/**
 * Readouts kept per branch in the ledger (version 2): the latest curvature measurement, the
 * sharpness trace and the latest gradient audit, so a reopened notebook shows them without
 * recomputing. Their shapes belong to the readouts (the worker types them); the ledger keeps
 * them as plain JSON with every number exact, bounded in size, and guarded by a digest.
 *
 * Exact JSON ("loose" encoding): a finite number other than -0 stays a number; any other number
 * becomes `"f64:"` + 16 hex digits of its bits (as {@link encodeScalar}); a string that starts
 * with `f64:` or `~` gets a `~` in front, so decoding is unambiguous.
 */
import { decodeScalar, encodeScalar } from './codec';
import { sha256Hex } from './hash';
import { LedgerError } from './types';
import type { LedgerReadouts } from './types';

/** Most sharpness points kept per branch (thinned by a power-of-two stride of steps beyond it). */
export const MAX_SHARPNESS_POINTS = 512;
/** Most UTF-8 bytes of one encoded readout (curvature, the sharpness trace, or audit). */
export const MAX_READOUT_BYTES = 256 * 1024;

/**
 * Plain readouts of one branch, as the worker holds them (numbers may be non-finite). Each
 * value is a plain object with an integer `step` (checked by the schema after encoding).
 */
export interface ReadoutsInput {
  curvature?: object | null;
  sharpness?: readonly object[];
  audit?: object | null;
}

/** Decoded readouts: plain values with exact numbers; the worker checks their shapes. */
export interface DecodedReadouts {
  curvature: Record<string, unknown> | null;
  sharpness: Record<string, unknown>[];
  audit: Record<string, unknown> | null;
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

/** SHA-256 hex over the three encoded readouts in a fixed order, keys sorted; reveals hand edits. */
export function readoutsDigest(r: Omit<LedgerReadouts, 'digest'> | Record<string, unknown>): string {
  const o = r as Record<string, unknown>;
  return sha256Hex(`stepwell-readouts-v1;${canonicalJson([o.curvature ?? null, o.sharpness ?? null, o.audit ?? null])}`);
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
    return typeof q.sharpness === 'number' && typeof q.limit === 'number' && q.sharpness > q.limit;
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
  if (Object.keys(out).length === 0) return undefined;
  return { digest: readoutsDigest(out), ...out };
}

/**
 * Decodes stored readouts, checking the digest first (unless `verifyDigest` is false: a
 * verification that reports the edit and reads on).
 * @throws LedgerError naming the field.
 */
export function decodeReadouts(r: LedgerReadouts | undefined, field: string, verifyDigest = true): DecodedReadouts {
  if (r === undefined) return { curvature: null, sharpness: [], audit: null };
  if (verifyDigest && r.digest !== readoutsDigest(r)) throw new LedgerError(`${field}.digest`, 'does not match the readouts (they were edited or damaged)');
  return {
    curvature: r.curvature === undefined ? null : (decodeLoose(r.curvature, `${field}.curvature`) as Record<string, unknown>),
    sharpness: r.sharpness === undefined ? [] : (decodeLoose(r.sharpness, `${field}.sharpness`) as Record<string, unknown>[]),
    audit: r.audit === undefined ? null : (decodeLoose(r.audit, `${field}.audit`) as Record<string, unknown>)
  };
}
