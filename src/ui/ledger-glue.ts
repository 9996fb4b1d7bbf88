/**
 * The one adapter between the cell controller and the ledger format.
 *
 * Until the ledger layer (`src/ledger/`) lands, this file holds a minimal encoding of its
 * own: float arrays as base64 of little-endian bytes, non-finite numbers as strings, every
 * field checked on read with a message that names the field. Swap the bodies of
 * {@link ledgerGlue}'s two functions for the ledger layer's `validateLedger`/`buildLedger`
 * and nothing else changes.
 */
import type { OptimizerState, SessionState, StepRecord } from '../core/state';
import type { CheckpointData, SessionSummary } from '../worker/protocol';
import type { LedgerContent, LedgerGlue, LedgerRead } from './ports';

/** Our metadata key on a stepwell cell. */
export const LEDGER_KEY = 'stepwell';

/** Format tag of this adapter's encoding. */
const FORMAT = 'stepwell-ledger-provisional-1';

function toBase64(bytes: Uint8Array): string {
  let s = '';
  for (let i = 0; i < bytes.length; i += 0x8000) s += String.fromCharCode(...bytes.subarray(i, i + 0x8000));
  return btoa(s);
}

function fromBase64(text: string, where: string): Uint8Array {
  let s: string;
  try {
    s = atob(text);
  } catch {
    throw new Error(`${where} is not valid base64`);
  }
  const out = new Uint8Array(s.length);
  for (let i = 0; i < s.length; i++) out[i] = s.charCodeAt(i);
  return out;
}

function f64(a: Float64Array): string {
  const v = new DataView(new ArrayBuffer(a.length * 8));
  a.forEach((x, i) => v.setFloat64(i * 8, x, true));
  return toBase64(new Uint8Array(v.buffer));
}

function unf64(text: unknown, where: string): Float64Array {
  if (typeof text !== 'string') throw new Error(`${where} must be a base64 string`);
  const b = fromBase64(text, where);
  if (b.length % 8 !== 0) throw new Error(`${where} has ${b.length} bytes, not a multiple of 8`);
  const v = new DataView(b.buffer);
  return Float64Array.from({ length: b.length / 8 }, (_, i) => v.getFloat64(i * 8, true));
}

function i32(a: Int32Array): string {
  const v = new DataView(new ArrayBuffer(a.length * 4));
  a.forEach((x, i) => v.setInt32(i * 4, x, true));
  return toBase64(new Uint8Array(v.buffer));
}

function uni32(text: unknown, where: string): Int32Array {
  if (typeof text !== 'string') throw new Error(`${where} must be a base64 string`);
  const b = fromBase64(text, where);
  if (b.length % 4 !== 0) throw new Error(`${where} has ${b.length} bytes, not a multiple of 4`);
  const v = new DataView(b.buffer);
  return Int32Array.from({ length: b.length / 4 }, (_, i) => v.getInt32(i * 4, true));
}

/** JSON cannot hold NaN or ±Infinity: they travel as strings. */
function encodeNumbers(value: unknown): unknown {
  if (typeof value === 'number') return Number.isFinite(value) ? value : String(value);
  if (Array.isArray(value)) return value.map(encodeNumbers);
  if (value !== null && typeof value === 'object') {
    const out: Record<string, unknown> = {};
    for (const [k, v] of Object.entries(value)) if (v !== undefined) out[k] = encodeNumbers(v);
    return out;
  }
  return value;
}

function decodeNumbers(value: unknown): unknown {
  if (value === 'NaN') return NaN;
  if (value === 'Infinity') return Infinity;
  if (value === '-Infinity') return -Infinity;
  if (Array.isArray(value)) return value.map(decodeNumbers);
  if (value !== null && typeof value === 'object') {
    const out: Record<string, unknown> = {};
    for (const [k, v] of Object.entries(value)) out[k] = decodeNumbers(v);
    return out;
  }
  return value;
}

function encodeState(s: SessionState): Record<string, unknown> {
  const buffers: Record<string, string> = {};
  for (const [k, v] of Object.entries(s.optimizer.buffers)) buffers[k] = f64(v);
  return {
    step: s.step,
    params: f64(s.params),
    optimizer: { kind: s.optimizer.kind, t: s.optimizer.t, buffers, scalars: encodeNumbers(s.optimizer.scalars) },
    rng: { s: [...s.rng.s], spare: s.rng.spare === null ? null : encodeNumbers(s.rng.spare) },
    epoch: s.epoch,
    cursor: s.cursor,
    order: s.order === null ? null : i32(s.order)
  };
}

const obj = (v: unknown, where: string): Record<string, unknown> => {
  if (typeof v !== 'object' || v === null || Array.isArray(v)) throw new Error(`${where} must be an object`);
  return v as Record<string, unknown>;
};
const int = (v: unknown, where: string): number => {
  if (typeof v !== 'number' || !Number.isInteger(v) || v < 0) throw new Error(`${where} must be a non-negative integer, got ${JSON.stringify(v)}`);
  return v;
};

function decodeState(v: unknown, where: string): SessionState {
  const s = obj(v, where);
  const o = obj(s.optimizer, `${where}.optimizer`);
  const buffers: Record<string, Float64Array> = {};
  for (const [k, b] of Object.entries(obj(o.buffers, `${where}.optimizer.buffers`))) buffers[k] = unf64(b, `${where}.optimizer.buffers.${k}`);
  const r = obj(s.rng, `${where}.rng`);
  const words = r.s;
  if (!Array.isArray(words) || words.length !== 4 || words.some(w => typeof w !== 'number')) throw new Error(`${where}.rng.s must be four numbers`);
  const spare = decodeNumbers(r.spare);
  const optimizer: OptimizerState = {
    kind: String(o.kind) as OptimizerState['kind'],
    t: int(o.t, `${where}.optimizer.t`),
    buffers,
    scalars: decodeNumbers(obj(o.scalars, `${where}.optimizer.scalars`)) as Record<string, number>
  };
  return {
    step: int(s.step, `${where}.step`),
    params: unf64(s.params, `${where}.params`),
    optimizer,
    rng: { s: words as [number, number, number, number], spare: typeof spare === 'number' ? spare : null },
    epoch: int(s.epoch, `${where}.epoch`),
    cursor: int(s.cursor, `${where}.cursor`),
    order: s.order === null ? null : uni32(s.order, `${where}.order`)
  };
}

/** Keeps step 0, the newest checkpoint and an even spread between them, at most `cap`. */
export function thin(checkpoints: CheckpointData[], cap: number): CheckpointData[] {
  if (checkpoints.length <= cap) return checkpoints;
  if (cap <= 1) return checkpoints.slice(-1);
  const keep = new Set<number>();
  for (let i = 0; i < cap; i++) keep.add(Math.round((i * (checkpoints.length - 1)) / (cap - 1)));
  return checkpoints.filter((_, i) => keep.has(i));
}

function read(value: unknown): LedgerRead {
  if (value === undefined || value === null) return { kind: 'absent' };
  const spec = typeof (value as { specText?: unknown }).specText === 'string' ? (value as { specText: string }).specText : undefined;
  try {
    const v = obj(value, 'the ledger');
    if (v.format !== FORMAT) throw new Error(`the ledger format is ${JSON.stringify(v.format)}, expected "${FORMAT}"`);
    if (typeof v.specText !== 'string') throw new Error('ledger.specText must be a string');
    const trajectory = decodeNumbers(v.trajectory) as StepRecord[];
    if (!Array.isArray(trajectory) || trajectory.length === 0) throw new Error('ledger.trajectory must be a non-empty list');
    trajectory.forEach((r, i) => {
      if (typeof r !== 'object' || r === null || r.step !== i + trajectory[0].step || typeof r.loss !== 'number') {
        throw new Error(`ledger.trajectory[${i}] is not a step record in order`);
      }
    });
    const state = decodeState(v.state, 'ledger.state');
    if (state.step !== trajectory[trajectory.length - 1].step) {
      throw new Error(`ledger.state is at step ${state.step} but ledger.trajectory ends at ${trajectory[trajectory.length - 1].step}`);
    }
    if (!Array.isArray(v.checkpoints)) throw new Error('ledger.checkpoints must be a list');
    const checkpoints = v.checkpoints.map((c, i): CheckpointData => {
      const o = obj(c, `ledger.checkpoints[${i}]`);
      return { step: int(o.step, `ledger.checkpoints[${i}].step`), fingerprint: String(o.fingerprint), state: decodeState(o.state, `ledger.checkpoints[${i}].state`) };
    });
    const summary = obj(v.summary, 'ledger.summary') as unknown as SessionSummary;
    if (typeof summary.fingerprint !== 'string' || summary.step !== state.step) throw new Error('ledger.summary does not match ledger.state');
    return { kind: 'ok', content: { specText: v.specText, summary, state, trajectory, checkpoints } };
  } catch (error) {
    return { kind: 'corrupt', message: (error as Error).message, specText: spec };
  }
}

function build(content: LedgerContent, cap: number): { value: object; bytes: number } {
  const value = {
    format: FORMAT,
    specText: content.specText,
    summary: encodeNumbers(content.summary),
    state: encodeState(content.state),
    trajectory: encodeNumbers(content.trajectory),
    checkpoints: thin(content.checkpoints, cap).map(c => ({ step: c.step, fingerprint: c.fingerprint, state: encodeState(c.state) }))
  };
  // Validate the full value before anyone writes it: never half a ledger.
  const check = read(JSON.parse(JSON.stringify(value)));
  if (check.kind !== 'ok') throw new Error(`the new ledger failed its own check: ${check.kind === 'corrupt' ? check.message : 'empty'}`);
  return { value, bytes: JSON.stringify(value).length };
}

/** The ledger glue the plugin uses. */
export const ledgerGlue: LedgerGlue = { read, build };
