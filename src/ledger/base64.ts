/**
 * Base64 (RFC 4648 §4, standard alphabet, padded) of typed arrays in little-endian byte
 * order, with strict decoding: every malformed input is rejected with a message naming
 * the field, so a hand-edited ledger never decodes into silently wrong numbers.
 */
import { LedgerError } from './types';

const ALPHABET = 'ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/';
const INDEX = new Int16Array(128).fill(-1);
for (let i = 0; i < ALPHABET.length; i++) INDEX[ALPHABET.charCodeAt(i)] = i;

/** The alphabet's character codes, for writing the encoding as bytes. */
const CODES = Uint8Array.from(ALPHABET, (c) => c.charCodeAt(0));
const PAD = 61; // '='
const ascii = new TextDecoder('utf-8');

/**
 * Encodes bytes as padded standard base64. The characters are written as ASCII bytes and
 * decoded into a string once: building the string piece by piece made a ledger of a few MB
 * spend most of its time collecting garbage.
 */
export function base64FromBytes(bytes: Uint8Array): string {
  const n = bytes.length;
  const out = new Uint8Array(4 * Math.ceil(n / 3));
  const whole = n - (n % 3);
  let o = 0;
  for (let i = 0; i < whole; i += 3) {
    const t = (bytes[i] << 16) | (bytes[i + 1] << 8) | bytes[i + 2];
    out[o] = CODES[t >> 18];
    out[o + 1] = CODES[(t >> 12) & 63];
    out[o + 2] = CODES[(t >> 6) & 63];
    out[o + 3] = CODES[t & 63];
    o += 4;
  }
  if (whole < n) {
    const b0 = bytes[whole];
    const b1 = whole + 1 < n ? bytes[whole + 1] : 0;
    out[o] = CODES[b0 >> 2];
    out[o + 1] = CODES[((b0 & 3) << 4) | (b1 >> 4)];
    out[o + 2] = whole + 1 < n ? CODES[(b1 & 15) << 2] : PAD;
    out[o + 3] = PAD;
  }
  return ascii.decode(out);
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
  // Quads without padding in a tight loop (no allocation per quad); a quad with a bad character,
  // and the padded last one, through `quad`, which names what is wrong.
  const plain = pad === 0 ? n : n - 4;
  let o = 0;
  for (let i = 0; i < plain; i += 4) {
    const c0 = text.charCodeAt(i), c1 = text.charCodeAt(i + 1), c2 = text.charCodeAt(i + 2), c3 = text.charCodeAt(i + 3);
    const v0 = c0 < 128 ? INDEX[c0] : -1, v1 = c1 < 128 ? INDEX[c1] : -1, v2 = c2 < 128 ? INDEX[c2] : -1, v3 = c3 < 128 ? INDEX[c3] : -1;
    if ((v0 | v1 | v2 | v3) < 0) quad(text, i, n, pad, field);
    const triple = (v0 << 18) | (v1 << 12) | (v2 << 6) | v3;
    out[o] = triple >> 16;
    out[o + 1] = (triple >> 8) & 255;
    out[o + 2] = triple & 255;
    o += 3;
  }
  if (plain < n) {
    const triple = quad(text, plain, n, pad, field);
    if (o < out.length) out[o++] = (triple >> 16) & 255;
    if (o < out.length) out[o++] = (triple >> 8) & 255;
    if (o < out.length) out[o++] = triple & 255;
    if ((pad === 1 && (triple & 0xff) !== 0) || (pad === 2 && (triple & 0xffff) !== 0)) throw new LedgerError(field, 'base64 has non-zero padding bits (the text was altered)');
  }
  return out;
}

/** The 24 bits of the quad at `i`, or the error naming its first character that does not belong there. */
function quad(text: string, i: number, n: number, pad: number, field: string): number {
  let triple = 0;
  for (let j = 0; j < 4; j++) {
    const pos = i + j;
    const c = text.charCodeAt(pos);
    if (pos >= n - pad) {
      if (c !== PAD) throw new LedgerError(field, `invalid base64 character '${text[pos]}' at position ${pos}`);
      continue;
    }
    const v = c < 128 ? INDEX[c] : -1;
    if (v < 0) throw new LedgerError(field, `invalid base64 character ${JSON.stringify(text[pos])} at position ${pos}`);
    triple |= v << (18 - 6 * j);
  }
  return triple;
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
