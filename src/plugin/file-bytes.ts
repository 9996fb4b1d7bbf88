/**
 * Pure helpers of reading a cell's files through the Jupyter contents API: where a name the spec
 * writes points relative to the notebook, and the bytes of a base64 content model (RFC 4648 §4;
 * the Jupyter server wraps its base64 in lines of 76 characters, so line breaks are skipped).
 * No JupyterLab imports, so Node tests run them.
 */

/** Outcome of {@link resolveFromNotebook}: a path from the Jupyter root, or why there is none. */
type Resolved = { ok: true; path: string } | { ok: false; message: string };

/**
 * The contents path of `name` as a spec writes it, relative to the folder of the notebook at
 * `notebookPath` (`/name` is from the Jupyter root). `.` and `..` segments are resolved; a path
 * that climbs above the root is refused (the server would refuse it too).
 */
export function resolveFromNotebook(notebookPath: string, name: string): Resolved {
  const fromRoot = name.startsWith('/');
  const folder = notebookPath.split('/').filter((s) => s !== '');
  folder.pop(); // the notebook's own name
  const parts = fromRoot ? [] : folder;
  for (const seg of name.split('/')) {
    if (seg === '' || seg === '.') continue;
    if (seg === '..') {
      if (parts.length === 0) return { ok: false, message: `'${name}' points above the Jupyter root (the notebook is in ${folder.length === 0 ? 'the root' : `'${folder.join('/')}'`})` };
      parts.pop();
    } else parts.push(seg);
  }
  if (parts.length === 0) return { ok: false, message: `'${name}' names a folder, not a file` };
  return { ok: true, path: parts.join('/') };
}

const INDEX = new Int16Array(128).fill(-1);
'ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/'.split('').forEach((c, i) => (INDEX[c.charCodeAt(0)] = i));
const isSpace = (c: number): boolean => c === 10 || c === 13 || c === 32 || c === 9;

/** Outcome of {@link bytesOfBase64}. */
type Decoded = { ok: true; bytes: Uint8Array } | { ok: false; message: string };

/**
 * Decodes base64 content (padded, standard alphabet, line breaks allowed) into one new
 * Uint8Array, after counting the bytes it will hold: more than `maxBytes` is refused before
 * anything is allocated.
 */
export function bytesOfBase64(text: string, maxBytes: number): Decoded {
  let symbols = 0;
  let pad = 0;
  for (let i = 0; i < text.length; i++) {
    const c = text.charCodeAt(i);
    if (isSpace(c)) continue;
    if (c === 61) {
      pad++;
      continue;
    }
    if (pad > 0 || c >= 128 || INDEX[c] < 0) return { ok: false, message: `the server sent malformed base64 (character ${JSON.stringify(text[i])} at position ${i})` };
    symbols++;
  }
  if ((symbols + pad) % 4 !== 0 || pad > 2) return { ok: false, message: `the server sent malformed base64 (${symbols + pad} symbols, not a multiple of 4)` };
  const size = ((symbols + pad) / 4) * 3 - pad;
  if (size > maxBytes) return { ok: false, message: `the file has ${size} bytes, above the limit of ${maxBytes} for a data or weights file` };
  const out = new Uint8Array(size);
  let acc = 0;
  let bits = 0;
  let o = 0;
  for (let i = 0; i < text.length && o < size; i++) {
    const c = text.charCodeAt(i);
    if (isSpace(c) || c === 61) continue;
    acc = ((acc << 6) | INDEX[c]) & 0xffffff;
    bits += 6;
    if (bits >= 8) {
      bits -= 8;
      out[o++] = (acc >> bits) & 255;
    }
  }
  return { ok: true, bytes: out };
}

/**
 * True when `raw` holds exactly the text a contents manager gave as `text` — the same file, only
 * decoded: UTF-8 with a leading byte-order mark dropped, as `Response.text()` decodes
 * (WHATWG Encoding, "UTF-8 decode"). Then `raw` are the file's bytes to hash and read; otherwise
 * (the file was changed in the browser's storage since the site was built) the text is all there is.
 */
export function sameFileAsText(raw: Uint8Array, text: string): boolean {
  return new TextDecoder('utf-8').decode(raw) === text;
}
