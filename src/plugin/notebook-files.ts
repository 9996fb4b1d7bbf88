/**
 * Reads the files a stepwell cell's spec names through the Jupyter contents API, relative to the
 * notebook's folder — the same call in the embedded app (JupyterLite's in-browser drive), a real
 * Jupyter server and the static site. Each file's size is checked against the readers' limit
 * before its content is fetched, and base64 content is decoded once into the buffer that then
 * moves to the engine worker. The size limit is the `maxFileBytes` setting, read at each read.
 */
import type { Contents } from '@jupyterlab/services';
import type { FilesRead } from '../ui/ports';
import { bytesOfBase64, resolveFromNotebook, sameFileAsText } from './file-bytes';

/** Why a contents request failed, in words (404 and 403 named). */
function why(error: unknown, path: string, folder: string): string {
  const status = (error as { response?: { status?: number } }).response?.status;
  if (status === 404 || /not found/i.test(String((error as Error).message ?? error))) return `not found: there is no '${path}' (names are relative to the notebook's folder, ${folder === '' ? 'the Jupyter root' : `'${folder}'`})`;
  if (status === 403) return `the server refused to read '${path}' (403)`;
  return `'${path}' could not be read: ${(error as Error).message ?? String(error)}`;
}

/**
 * Fetches a file's bytes exactly as stored on the site (JupyterLite's `files/` folder), or null
 * when there is no such file. JupyterLite hands a CSV over as text, decoded — a byte-order mark
 * dropped — so its content hash would not equal the CLI's; the raw bytes keep it.
 */
export type RawFileFetch = (path: string) => Promise<Uint8Array | null>;

/** How {@link notebookFileReader} reads: the limit in force now, and the raw fetch of a text file. */
export interface FileReadOptions {
  /** The largest file accepted, asked at each read (a setting: `maxFileBytes`). */
  maxBytes: () => number;
  /** Where a file the contents manager gives as text has its bytes (JupyterLite); absent: the text is encoded as UTF-8. */
  rawBytes?: RawFileFetch;
}

const tooLarge = (path: string, size: number, maxBytes: number): string => `'${path}' has ${size} bytes, above the limit of ${maxBytes} for a data or weights file (setting maxFileBytes)`;

/**
 * A file the contents manager gives as text: the text as UTF-8 when that has the file's size
 * (`size`, from the contents model), else its raw bytes when they decode to that text (a
 * byte-order mark the decoding dropped), else the text as UTF-8.
 */
async function textFileBytes(path: string, text: string, size: number | undefined, maxBytes: number, rawBytes: RawFileFetch | undefined): Promise<Uint8Array | string> {
  const encoded = new TextEncoder().encode(text);
  if (rawBytes !== undefined && encoded.length !== size) {
    let raw: Uint8Array | null = null;
    try {
      raw = await rawBytes(path);
    } catch {
      raw = null; // no raw copy (e.g. a file made in the browser): the text is all there is
    }
    if (raw !== null && sameFileAsText(raw, text)) return raw.length > maxBytes ? tooLarge(path, raw.length, maxBytes) : raw;
  }
  return encoded.length > maxBytes ? tooLarge(path, encoded.length, maxBytes) : encoded;
}

/** Reads one file; the bytes, or the sentence saying why not. */
async function readOne(contents: Contents.IManager, fullPath: string, name: string, maxBytes: number, rawBytes: RawFileFetch | undefined): Promise<Uint8Array | string> {
  // A drive prefix ("RTC:…") stays in front; names resolve inside the drive.
  const drive = contents.driveName(fullPath);
  const notebookPath = contents.localPath(fullPath);
  const resolved = resolveFromNotebook(notebookPath, name);
  if (!resolved.ok) return resolved.message;
  const path = drive === '' ? resolved.path : `${drive}:${resolved.path}`;
  const folder = notebookPath.includes('/') ? notebookPath.slice(0, notebookPath.lastIndexOf('/')) : '';
  let model: Contents.IModel;
  try {
    model = await contents.get(path, { content: false });
  } catch (error) {
    return why(error, path, folder);
  }
  if (model.type === 'directory') return `'${path}' is a folder, not a file`;
  if (typeof model.size === 'number' && model.size > maxBytes) return tooLarge(path, model.size, maxBytes);
  try {
    // JupyterLite keeps text files (a CSV from the site's contents index) as text and cannot turn
    // every text into base64; a real server sends any file as base64 (its model's format is null here).
    if (model.format === 'text' || model.format === 'json') {
      const got = await contents.get(path, { content: true, format: model.format, type: 'file' });
      const text = typeof got.content === 'string' ? got.content : JSON.stringify(got.content);
      if (text.length > maxBytes) return `'${path}' has more than ${maxBytes} bytes, the limit for a data or weights file (setting maxFileBytes)`;
      return await textFileBytes(drive === '' ? resolved.path : path, text, typeof model.size === 'number' ? model.size : undefined, maxBytes, drive === '' ? rawBytes : undefined);
    }
    const got = await contents.get(path, { content: true, format: 'base64', type: 'file' });
    if (typeof got.content !== 'string') return `'${path}' came back from the server without content`;
    const decoded = bytesOfBase64(got.content, maxBytes);
    return decoded.ok ? decoded.bytes : `'${path}': ${decoded.message}`;
  } catch (error) {
    return why(error, path, folder);
  }
}

/**
 * Reads `names` relative to the notebook at `notebookPath()` (asked at read time: notebooks move),
 * each refused above `options.maxBytes()` before its content is fetched.
 */
export function notebookFileReader(contents: Contents.IManager, notebookPath: () => string | null, options: FileReadOptions): (names: readonly string[]) => Promise<FilesRead> {
  return async (names) => {
    const out: FilesRead = { files: new Map(), problems: new Map() };
    const at = notebookPath();
    const maxBytes = options.maxBytes();
    for (const name of names) {
      if (at === null) {
        out.problems.set(name, 'the cell is not in a notebook that has a path, so nothing can be read relative to it');
        continue;
      }
      const got = await readOne(contents, at, name, maxBytes, options.rawBytes);
      if (typeof got === 'string') out.problems.set(name, got);
      else out.files.set(name, got);
    }
    return out;
  };
}
