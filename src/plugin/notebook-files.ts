/**
 * Reads the files a stepwell cell's spec names through the Jupyter contents API, relative to the
 * notebook's folder — the same call in the embedded app (JupyterLite's in-browser drive), a real
 * Jupyter server and the static site. Each file's size is checked against the readers' limit
 * before its content is fetched, and base64 content is decoded once into the buffer that then
 * moves to the engine worker.
 */
import type { Contents } from '@jupyterlab/services';
import { DEFAULT_LIMITS } from '../core/data/limits';
import type { FilesRead } from '../ui/ports';
import { bytesOfBase64, resolveFromNotebook } from './file-bytes';

/** Why a contents request failed, in words (404 and 403 named). */
function why(error: unknown, path: string, folder: string): string {
  const status = (error as { response?: { status?: number } }).response?.status;
  if (status === 404 || /not found/i.test(String((error as Error).message ?? error))) return `not found: there is no '${path}' (names are relative to the notebook's folder, ${folder === '' ? 'the Jupyter root' : `'${folder}'`})`;
  if (status === 403) return `the server refused to read '${path}' (403)`;
  return `'${path}' could not be read: ${(error as Error).message ?? String(error)}`;
}

/** Reads one file; the bytes, or the sentence saying why not. */
async function readOne(contents: Contents.IManager, fullPath: string, name: string, maxBytes: number): Promise<Uint8Array | string> {
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
  if (typeof model.size === 'number' && model.size > maxBytes) return `'${path}' has ${model.size} bytes, above the limit of ${maxBytes} for a data or weights file`;
  try {
    // JupyterLite keeps text files (a CSV from the site's contents index) as text and cannot turn
    // every text into base64; a real server sends any file as base64 (its model's format is null here).
    if (model.format === 'text' || model.format === 'json') {
      const got = await contents.get(path, { content: true, format: model.format, type: 'file' });
      const text = typeof got.content === 'string' ? got.content : JSON.stringify(got.content);
      if (text.length > maxBytes) return `'${path}' has more than ${maxBytes} bytes, the limit for a data or weights file`;
      const bytes = new TextEncoder().encode(text);
      return bytes.length > maxBytes ? `'${path}' has ${bytes.length} bytes, above the limit of ${maxBytes} for a data or weights file` : bytes;
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
 * Reads `names` relative to the notebook at `notebookPath()` (asked at read time: notebooks move).
 * @param maxBytes - largest file accepted (default: the readers' limit, 64 MiB).
 */
export function notebookFileReader(contents: Contents.IManager, notebookPath: () => string | null, maxBytes = DEFAULT_LIMITS.maxBytes): (names: readonly string[]) => Promise<FilesRead> {
  return async (names) => {
    const out: FilesRead = { files: new Map(), problems: new Map() };
    const at = notebookPath();
    for (const name of names) {
      if (at === null) {
        out.problems.set(name, 'the cell is not in a notebook that has a path, so nothing can be read relative to it');
        continue;
      }
      const got = await readOne(contents, at, name, maxBytes);
      if (typeof got === 'string') out.problems.set(name, got);
      else out.files.set(name, got);
    }
    return out;
  };
}
