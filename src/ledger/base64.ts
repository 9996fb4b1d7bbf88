/**
 * Base64 (RFC 4648 §4, standard alphabet, padded) of typed arrays in little-endian byte
 * order, with strict decoding: every malformed input is rejected with a message naming
 * the field, so a hand-edited ledger never decodes into silently wrong numbers.
 */
import { LedgerError } from './types';

const ALPHABET = 'ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/';
const INDEX = new Int16Array(128).fill(-1);
for (let i = 0; i < ALPHABET.length; i++) INDEX[ALPHABET.charCodeAt(i)] = i;

/** Encodes bytes as padded standard base64. */
export function base64FromBytes(bytes: Uint8Array): string {
  const parts: string[] = [];
  let chunk = '';
  for (let i = 0; i < bytes.length; i += 3) {
    const b0 = bytes[i];
    const b1 = i + 1 < bytes.length ? bytes[i + 1] : 0;
    const b2 = i + 2 < bytes.length ? bytes[i + 2] : 0;
    chunk += ALPHABET[b0 >> 2] + ALPHABET[((b0 & 3) << 4) | (b1 >> 4)];
    chunk += i + 1 < bytes.length ? ALPHABET[((b1 & 15) << 2) | (b2 >> 6)] : '=';
    chunk += i + 2 < bytes.length ? ALPHABET[b2 & 63] : '=';
    if (chunk.length >= 8192) {
      parts.push(chunk);
      chunk = '';
    }
  }
  parts.push(chunk);
  return parts.join('');
}

/**
 * Decodes padded standard base64, rejecting wrong lengths, foreign characters, misplaced
 * padding and non-zero padding bits (so each byte string has exactly one spelling).
 * @param field - named in every error, e.g. `branches[0].head.state.params`.
 */
export function bytesFromBase64(text: unknown, field: string): Uint8Array {
  if (typeof text !== 'string') throw new LedgerError(field, `expected a base64 string, got ${text === null ? 'null' : typeof text}`);
  const n = text.length;
  if (n % 4 !== 0) throw new LedgerError(field, `base64 length ${n} is not a multiple of 4`);
  let pad = 0;
  if (n > 0 && text[n - 1] === '=') pad = text[n - 2] === '=' ? 2 : 1;
  const out = new Uint8Array((n / 4) * 3 - pad);
  let o = 0;
  for (let i = 0; i < n; i += 4) {
    const q = [0, 0, 0, 0];
    for (let j = 0; j < 4; j++) {
      const pos = i + j;
      const c = text.charCodeAt(pos);
      if (pos >= n - pad) {
        if (c !== 61) throw new LedgerError(field, `invalid base64 character '${text[pos]}' at position ${pos}`);
        continue;
      }
      const v = c < 128 ? INDEX[c] : -1;
      if (v < 0) throw new LedgerError(field, `invalid base64 character ${JSON.stringify(text[pos])} at position ${pos}`);
      q[j] = v;
    }
    const triple = (q[0] << 18) | (q[1] << 12) | (q[2] << 6) | q[3];
    if (o < out.length) out[o++] = (triple >> 16) & 255;
    if (o < out.length) out[o++] = (triple >> 8) & 255;
    if (o < out.length) out[o++] = triple & 255;
    if (i + 4 === n && ((pad === 1 && (triple & 0xff) !== 0) || (pad === 2 && (triple & 0xffff) !== 0)))
      throw new LedgerError(field, 'base64 has non-zero padding bits (the text was altered)');
  }
  return out;
}

/** Encodes a Float64Array as base64 of its little-endian IEEE-754 bytes (NaN payloads and -0 kept). */
export function base64FromFloat64(a: Float64Array): string {
  const bytes = new Uint8Array(a.length * 8);
  const view = new DataView(bytes.buffer);
  for (let i = 0; i < a.length; i++) view.setFloat64(i * 8, a[i], true);
  return base64FromBytes(bytes);
}

/**
 * Decodes base64 little-endian float64.
 * @param field - named in errors.
 * @param expectedLength - when given, the number of doubles the field must hold.
 * @throws LedgerError for malformed base64, a byte count not a multiple of 8, or a wrong length.
 */
export function float64FromBase64(text: unknown, field: string, expectedLength?: number): Float64Array {
  const bytes = bytesFromBase64(text, field);
  if (bytes.length % 8 !== 0) throw new LedgerError(field, `decodes to ${bytes.length} bytes, not a multiple of 8 (float64)`);
  const n = bytes.length / 8;
  if (expectedLength !== undefined && n !== expectedLength) throw new LedgerError(field, `holds ${n} numbers, expected ${expectedLength}`);
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const out = new Float64Array(n);
  for (let i = 0; i < n; i++) out[i] = view.getFloat64(i * 8, true);
  return out;
}

/** Encodes an Int32Array as base64 of its little-endian bytes. */
export function base64FromInt32(a: Int32Array): string {
  const bytes = new Uint8Array(a.length * 4);
  const view = new DataView(bytes.buffer);
  for (let i = 0; i < a.length; i++) view.setInt32(i * 4, a[i], true);
  return base64FromBytes(bytes);
}

/** Decodes base64 little-endian int32 (see {@link float64FromBase64} for the checks). */
export function int32FromBase64(text: unknown, field: string, expectedLength?: number): Int32Array {
  const bytes = bytesFromBase64(text, field);
  if (bytes.length % 4 !== 0) throw new LedgerError(field, `decodes to ${bytes.length} bytes, not a multiple of 4 (int32)`);
  const n = bytes.length / 4;
  if (expectedLength !== undefined && n !== expectedLength) throw new LedgerError(field, `holds ${n} integers, expected ${expectedLength}`);
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const out = new Int32Array(n);
  for (let i = 0; i < n; i++) out[i] = view.getInt32(i * 4, true);
  return out;
}
