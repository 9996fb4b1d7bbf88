/**
 * Exact encode/decode of session states and trajectories into the ledger's JSON form.
 * Decoders check every field and throw {@link LedgerError} naming the field; they never
 * return a partly decoded value.
 */
import type { OptimizerName } from '../core/setup';
import type { LayerRecord, SessionState, StepRecord } from '../core/state';
import { base64FromFloat64, base64FromInt32, float64FromBase64, int32FromBase64 } from './base64';
import { sha256Hex } from './hash';
import { LedgerError } from './types';
import type { EncodedScalar, EncodedSessionState, EncodedTrajectory } from './types';

const OPTIMIZERS: readonly OptimizerName[] = ['sgd', 'adagrad', 'rmsprop', 'adam', 'adamw', 'lbfgs', 'cg', 'newton', 'gauss-newton', 'minibatch-lbfgs'];
const scratch = new DataView(new ArrayBuffer(8));

/** Encodes one number so JSON carries it exactly (see {@link EncodedScalar}). */
export function encodeScalar(x: number): EncodedScalar {
  if (Number.isFinite(x) && !Object.is(x, -0)) return x;
  scratch.setFloat64(0, x, false);
  let hex = '';
  for (let i = 0; i < 8; i++) hex += scratch.getUint8(i).toString(16).padStart(2, '0');
  return `f64:${hex}`;
}

/** Decodes an {@link EncodedScalar}; throws naming `field` when it is neither form. */
export function decodeScalar(v: unknown, field: string): number {
  if (typeof v === 'number') {
    if (!Number.isFinite(v)) throw new LedgerError(field, `expected a finite number, got ${v}`);
    return v;
  }
  if (typeof v === 'string' && /^f64:[0-9a-f]{16}$/.test(v)) {
    for (let i = 0; i < 8; i++) scratch.setUint8(i, parseInt(v.slice(4 + 2 * i, 6 + 2 * i), 16));
    return scratch.getFloat64(0, false);
  }
  throw new LedgerError(field, `expected a number or "f64:" + 16 hex digits, got ${JSON.stringify(v)}`);
}

const isObj = (v: unknown): v is Record<string, unknown> => typeof v === 'object' && v !== null && !Array.isArray(v);

function need(v: unknown, field: string): Record<string, unknown> {
  if (!isObj(v)) throw new LedgerError(field, `expected an object, got ${v === null ? 'null' : Array.isArray(v) ? 'a list' : typeof v}`);
  return v;
}

function int(v: unknown, field: string, max = Number.MAX_SAFE_INTEGER): number {
  if (typeof v !== 'number' || !Number.isInteger(v) || v < 0 || v > max)
    throw new LedgerError(field, `expected an integer from 0 to ${max}, got ${JSON.stringify(v)}`);
  return v;
}

/** Names an object's own key may not have in a decoded record: they reach or shadow `Object.prototype`. */
export const FORBIDDEN_KEYS: readonly string[] = ['__proto__', 'constructor', 'prototype'];

/** Returns `k` when it is an allowed record key, else throws naming the record. */
function safeKey(k: string, field: string): string {
  if (FORBIDDEN_KEYS.includes(k)) throw new LedgerError(field, `has a key named '${k}', which no optimizer state holds (a prototype key); the ledger was edited or damaged`);
  return k;
}

/** Encodes a session state (arrays copied into base64; the input is not kept). */
export function encodeSessionState(s: SessionState): EncodedSessionState {
  const buffers: Record<string, string> = {};
  for (const k of Object.keys(s.optimizer.buffers)) buffers[k] = base64FromFloat64(s.optimizer.buffers[k]);
  const scalars: Record<string, EncodedScalar> = {};
  for (const k of Object.keys(s.optimizer.scalars)) scalars[k] = encodeScalar(s.optimizer.scalars[k]);
  return {
    step: s.step,
    params: base64FromFloat64(s.params),
    optimizer: { kind: s.optimizer.kind, t: s.optimizer.t, buffers, scalars },
    rng: { s: [s.rng.s[0], s.rng.s[1], s.rng.s[2], s.rng.s[3]], spare: s.rng.spare === null ? null : encodeScalar(s.rng.spare) },
    epoch: s.epoch,
    cursor: s.cursor,
    order: s.order === null ? null : base64FromInt32(s.order),
  };
}

/**
 * Decodes an encoded session state, bit for bit.
 * @param field - path of the value in the ledger, used in error messages.
 * @param parameterCount - when given, the length `params` must have.
 */
export function decodeSessionState(e: unknown, field = 'state', parameterCount?: number): SessionState {
  const o = need(e, field);
  const opt = need(o.optimizer, `${field}.optimizer`);
  if (typeof opt.kind !== 'string' || !(OPTIMIZERS as readonly string[]).includes(opt.kind))
    throw new LedgerError(`${field}.optimizer.kind`, `expected one of ${OPTIMIZERS.join(', ')}, got ${JSON.stringify(opt.kind)}`);
  const rawBuffers = need(opt.buffers, `${field}.optimizer.buffers`);
  // Null-prototype records, and names checked first: a key such as `__proto__` must neither
  // reach a prototype nor vanish from what the fingerprint covers.
  const buffers = Object.create(null) as Record<string, Float64Array>;
  for (const k of Object.keys(rawBuffers)) buffers[safeKey(k, `${field}.optimizer.buffers`)] = float64FromBase64(rawBuffers[k], `${field}.optimizer.buffers.${k}`);
  const rawScalars = need(opt.scalars, `${field}.optimizer.scalars`);
  const scalars = Object.create(null) as Record<string, number>;
  for (const k of Object.keys(rawScalars)) scalars[safeKey(k, `${field}.optimizer.scalars`)] = decodeScalar(rawScalars[k], `${field}.optimizer.scalars.${k}`);
  const rng = need(o.rng, `${field}.rng`);
  if (!Array.isArray(rng.s) || rng.s.length !== 4) throw new LedgerError(`${field}.rng.s`, 'expected a list of 4 unsigned 32-bit integers');
  const words = rng.s.map((w, i) => int(w, `${field}.rng.s[${i}]`, 4294967295)) as [number, number, number, number];
  // source: Blackman & Vigna, "Scrambled linear pseudorandom number generators" (2021): the all-zero state of xoshiro is a fixed point.
  if (words.every((w) => w === 0)) throw new LedgerError(`${field}.rng.s`, 'is all zero, a state the generator never leaves (every later draw would be 0); the ledger was edited or damaged');
  const spare = rng.spare === null ? null : decodeScalar(rng.spare, `${field}.rng.spare`);
  if (spare !== null && !Number.isFinite(spare)) throw new LedgerError(`${field}.rng.spare`, `is ${spare}, but a spare normal draw is always a finite number; the ledger was edited or damaged`);
  return {
    step: int(o.step, `${field}.step`),
    params: float64FromBase64(o.params, `${field}.params`, parameterCount),
    optimizer: { kind: opt.kind as OptimizerName, t: int(opt.t, `${field}.optimizer.t`), buffers, scalars },
    rng: { s: words, spare },
    epoch: int(o.epoch, `${field}.epoch`),
    cursor: int(o.cursor, `${field}.cursor`),
    order: o.order === null ? null : int32FromBase64(o.order, `${field}.order`),
  };
}

const COLUMNS = ['step', 'loss', 'batchLoss', 'gradNorm', 'updateNorm', 'lr', 'evaluations', 'ms'] as const;
const LAYER_COLUMNS = [
  ['layerWeightNorm', 'weightNorm'],
  ['layerGradNorm', 'gradNorm'],
  ['layerUpdateRatio', 'updateRatio'],
] as const;

/**
 * Encodes step records column by column. Every record must carry the same number of
 * layer entries, numbered 0, 1, …, and either all or none a held-out loss.
 * @throws LedgerError (field `trajectory[i]…`) when the records are not uniform.
 */
export function encodeTrajectory(records: readonly StepRecord[]): EncodedTrajectory {
  const n = records.length;
  const layers = n > 0 ? records[0].layers.length : 0;
  const held = n > 0 && records[0].heldOutLoss !== undefined;
  const cols: Record<string, Float64Array> = {};
  for (const c of COLUMNS) cols[c] = new Float64Array(n);
  const heldCol = new Float64Array(held ? n : 0);
  const layerCols = LAYER_COLUMNS.map(() => new Float64Array(n * layers));
  records.forEach((r, i) => {
    for (const c of COLUMNS) cols[c][i] = r[c];
    if ((r.heldOutLoss !== undefined) !== held)
      throw new LedgerError(`trajectory[${i}].heldOutLoss`, `is ${held ? 'missing' : 'present'}, but record 0 ${held ? 'has' : 'has none'}; all records must agree`);
    if (held) heldCol[i] = r.heldOutLoss as number;
    if (r.layers.length !== layers)
      throw new LedgerError(`trajectory[${i}].layers`, `has ${r.layers.length} entries, but record 0 has ${layers}`);
    r.layers.forEach((l, j) => {
      if (l.layer !== j) throw new LedgerError(`trajectory[${i}].layers[${j}].layer`, `expected layer index ${j}, got ${l.layer}`);
      LAYER_COLUMNS.forEach(([, key], c) => (layerCols[c][i * layers + j] = l[key]));
    });
  });
  const t: EncodedTrajectory = {
    digest: '',
    count: n,
    layers,
    step: base64FromFloat64(cols.step),
    loss: base64FromFloat64(cols.loss),
    batchLoss: base64FromFloat64(cols.batchLoss),
    gradNorm: base64FromFloat64(cols.gradNorm),
    updateNorm: base64FromFloat64(cols.updateNorm),
    lr: base64FromFloat64(cols.lr),
    evaluations: base64FromFloat64(cols.evaluations),
    ms: base64FromFloat64(cols.ms),
    layerWeightNorm: base64FromFloat64(layerCols[0]),
    layerGradNorm: base64FromFloat64(layerCols[1]),
    layerUpdateRatio: base64FromFloat64(layerCols[2]),
  };
  if (held) t.heldOutLoss = base64FromFloat64(heldCol);
  t.digest = trajectoryDigest(t);
  return t;
}

/**
 * SHA-256 hex over `count`, `layers` and each column as `name=base64;` in a fixed order
 * (`heldOutLoss` only when present). Records are not part of any state fingerprint, so
 * this digest is what reveals an edited loss curve.
 */
export function trajectoryDigest(t: Omit<EncodedTrajectory, 'digest'> | Record<string, unknown>): string {
  const o = t as Record<string, unknown>;
  let text = `stepwell-trajectory-v1;count=${String(o.count)};layers=${String(o.layers)};`;
  for (const c of [...COLUMNS, 'heldOutLoss', ...LAYER_COLUMNS.map(([name]) => name)])
    if (o[c] !== undefined) text += `${c}=${String(o[c])};`;
  return sha256Hex(text);
}

/**
 * Decodes a columnar trajectory back into step records (bit for bit), checking every
 * column's length and that steps are non-negative integers, strictly increasing.
 * @param verifyDigest - also check {@link EncodedTrajectory.digest} (default true).
 */
export function decodeTrajectory(e: unknown, field = 'trajectory', verifyDigest = true): StepRecord[] {
  const o = need(e, field);
  const n = int(o.count, `${field}.count`);
  const layers = int(o.layers, `${field}.layers`);
  const cols: Record<string, Float64Array> = {};
  for (const c of COLUMNS) cols[c] = float64FromBase64(o[c], `${field}.${c}`, n);
  const held = o.heldOutLoss === undefined ? undefined : float64FromBase64(o.heldOutLoss, `${field}.heldOutLoss`, n);
  const layerCols = LAYER_COLUMNS.map(([name]) => float64FromBase64(o[name], `${field}.${name}`, n * layers));
  const out: StepRecord[] = [];
  for (let i = 0; i < n; i++) {
    const step = cols.step[i];
    if (!Number.isInteger(step) || step < 0) throw new LedgerError(`${field}.step`, `entry ${i} is ${step}, not a non-negative integer`);
    if (i > 0 && step <= cols.step[i - 1])
      throw new LedgerError(`${field}.step`, `steps must increase: entry ${i} is ${step} after ${cols.step[i - 1]}`);
    const ls: LayerRecord[] = [];
    for (let j = 0; j < layers; j++)
      ls.push({ layer: j, weightNorm: layerCols[0][i * layers + j], gradNorm: layerCols[1][i * layers + j], updateRatio: layerCols[2][i * layers + j] });
    const r: StepRecord = {
      step, loss: cols.loss[i], batchLoss: cols.batchLoss[i], gradNorm: cols.gradNorm[i], updateNorm: cols.updateNorm[i],
      lr: cols.lr[i], evaluations: cols.evaluations[i], layers: ls, ms: cols.ms[i],
    };
    if (held) r.heldOutLoss = held[i];
    out.push(r);
  }
  // Last, so that a malformed column gets its specific message first.
  if (verifyDigest && o.digest !== trajectoryDigest(o))
    throw new LedgerError(`${field}.digest`, 'does not match the columns (the records were edited or damaged)');
  return out;
}
