/**
 * The raw bytes of a file the site serves under `files/` — where JupyterLite's drive fetches the
 * files of its contents index from (`@jupyterlite/services` `drive.js`, `_getServerContents`),
 * but decoded to text for a CSV. Used by {@link notebookFileReader} to keep such files byte-exact.
 */
import { PageConfig, URLExt } from '@jupyterlab/coreutils';
import type { RawFileFetch } from './notebook-files';

/** Fetches `files/<path>` below the page's base URL; null when the site has no such file. */
export const siteFileBytes: RawFileFetch = async (path) => {
  const response = await fetch(URLExt.join(PageConfig.getBaseUrl(), 'files', path));
  if (!response.ok) return null;
  return new Uint8Array(await response.arrayBuffer());
};
