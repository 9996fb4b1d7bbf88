/**
 * The size of a stored ledger before it is read: a walk that counts the bytes of its JSON text
 * without building it.
 */

/** Characters that JSON writes as themselves and that take one UTF-8 byte each. */
const PLAIN = /^[\x20\x21\x23-\x5b\x5d-\x7e]*$/;

/** UTF-8 bytes of `JSON.stringify(s)` (quotes included); base64 and plain text take one fast test. */
function stringBytes(s: string): number {
  if (PLAIN.test(s)) return s.length + 2;
  let n = 2;
  for (let i = 0; i < s.length; i++) {
    const c = s.charCodeAt(i);
    if (c === 0x22 || c === 0x5c) n += 2;
    else if (c < 0x20) n += c === 8 || c === 9 || c === 10 || c === 12 || c === 13 ? 2 : 6;
    else if (c < 0x80) n += 1;
    else if (c < 0x800) n += 2;
    else if (c >= 0xd800 && c <= 0xdbff && i + 1 < s.length && s.charCodeAt(i + 1) >= 0xdc00 && s.charCodeAt(i + 1) <= 0xdfff) {
      n += 4;
      i++;
    } else if (c >= 0xd800 && c <= 0xdfff) n += 6; // a lone surrogate is written as \uXXXX
    else n += 3;
  }
  return n;
}

/**
 * The UTF-8 bytes of `JSON.stringify(value)` for a JSON value (what the notebook file holds),
 * counted without building the text: so a ledger above the `maxLedgerBytes` setting is refused
 * on the page without being copied, serialized or sent to a worker.
 * Formula: ECMAScript JSON.stringify's output (RFC 8259 escapes) measured in UTF-8 (RFC 3629).
 *
 * @param value - a JSON value as the notebook holds it (`undefined` counts as `null`).
 * @returns the size in bytes.
 */
export function jsonBytes(value: unknown): number {
  let total = 0;
  // An explicit stack: a deep value must not overflow the page's call stack.
  const stack: unknown[] = [value];
  while (stack.length > 0) {
    const v = stack.pop();
    if (typeof v === 'string') total += stringBytes(v);
    else if (typeof v === 'number') total += Number.isFinite(v) ? String(v).length : 4;
    else if (typeof v === 'boolean') total += v ? 4 : 5;
    else if (v === null || v === undefined) total += 4;
    else if (Array.isArray(v)) {
      total += 2 + Math.max(0, v.length - 1);
      for (const item of v) stack.push(item);
    } else if (typeof v === 'object') {
      const keys = Object.keys(v);
      total += 2 + Math.max(0, keys.length - 1);
      for (const k of keys) {
        total += stringBytes(k) + 1;
        stack.push((v as Record<string, unknown>)[k]);
      }
    }
  }
  return total;
}

/** Bytes as megabytes with one decimal (10⁶ bytes, as the setting's default 50 000 000 reads). */
function mb(bytes: number): string {
  return (bytes / 1e6).toFixed(1);
}

/**
 * Why a ledger of `bytes` bytes is not opened under `limit` (setting `maxLedgerBytes`): in MB
 * (10⁶ bytes, as the default 50 000 000 reads), or in bytes where one decimal would not tell them apart.
 *
 * @returns the message shown in the cell.
 */
export function tooLargeMessage(bytes: number, limit: number): string {
  const sizes = mb(bytes) === mb(limit) ? `${bytes} bytes > limit ${limit} bytes` : `${mb(bytes)} MB > limit ${mb(limit)} MB`;
  return `too large to open: ${sizes} (setting maxLedgerBytes); it was not read and is kept as it is. Raise the setting to open it, or Start over to replace it`;
}
