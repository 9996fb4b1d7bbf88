/**
 * Deep copies and fingerprints of session and optimizer states (plain data; SHA-256 via
 * {@link Fingerprinter}, FIPS 180-4).
 */
import { Fingerprinter } from '../fingerprint';
import type { OptimizerState, SessionState } from '../state';

/** A deep copy of an optimizer state (buffers copied, keys kept). */
export function copyOptimizerState(s: OptimizerState): OptimizerState {
  const buffers: Record<string, Float64Array> = {};
  for (const k of Object.keys(s.buffers)) buffers[k] = Float64Array.from(s.buffers[k]);
  return { kind: s.kind, t: s.t, buffers, scalars: { ...s.scalars } };
}

/** A deep copy of a session state: no array is shared with the input. */
export function copySessionState(s: SessionState): SessionState {
  return {
    step: s.step,
    params: Float64Array.from(s.params),
    optimizer: copyOptimizerState(s.optimizer),
    rng: { s: [s.rng.s[0], s.rng.s[1], s.rng.s[2], s.rng.s[3]], spare: s.rng.spare },
    epoch: s.epoch,
    cursor: s.cursor,
    order: s.order === null ? null : Int32Array.from(s.order)
  };
}

/**
 * SHA-256 hex over, in this order: step, params, optimizer kind, t, buffers and scalars in
 * sorted key order (each key hashed with its value), generator words and spare, epoch,
 * cursor and row order. Equal fingerprints mean bit-identical states.
 */
export function fingerprintState(s: SessionState): string {
  const f = new Fingerprinter();
  f.text('stepwell-session-v1').number(s.step).array(s.params);
  const o = s.optimizer;
  f.text(o.kind).number(o.t);
  const bufferKeys = Object.keys(o.buffers).sort();
  f.number(bufferKeys.length);
  for (const k of bufferKeys) f.text(k).array(o.buffers[k]);
  const scalarKeys = Object.keys(o.scalars).sort();
  f.number(scalarKeys.length);
  for (const k of scalarKeys) f.text(k).number(o.scalars[k]);
  for (const w of s.rng.s) f.number(w);
  if (s.rng.spare === null) f.text('no-spare');
  else f.text('spare').number(s.rng.spare);
  f.number(s.epoch).number(s.cursor);
  if (s.order === null) f.text('no-order');
  else f.text('order').array(Float64Array.from(s.order));
  return f.hex();
}
