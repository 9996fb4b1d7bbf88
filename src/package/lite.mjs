// `npm run build:lite`: the embedded app as a static site in dist/lite/ that works from any folder
// of any static web server (e.g. https://example.org/stepwell/): every URL it uses is relative to
// its own address (page config `siteRelative`, resolved in src/host/index.ts), and documents open
// as lab/index.html?path=<notebook>. Notebooks a visitor saves stay in their browser's storage.
// It is the development bundle of `npm run build` (a production bundle takes minutes and GBs here).
import fs from 'node:fs';
import path from 'node:path';
import { BUILD, ROOT, readAppConfig } from '../host/paths.mjs';
import { build } from '../host/build.mjs';
import { pageConfig } from '../host/assets.mjs';

/** Output folder (gitignored with dist/). */
export const LITE = path.join(ROOT, 'dist', 'lite');
/** What the site needs from build/ (not the build's own stamps, lock or generated sources). */
const PARTS = ['static', 'schemas', 'themes', 'api', 'files', 'service-worker.js'];

const escapeForScript = json => json.replace(/</g, '\\u003c');

/** The URL (relative to the site root) that opens a notebook. */
export const liteNotebookUrl = notebook => `lab/index.html?path=${encodeURIComponent(notebook)}`;

/** Build the site; returns `{ dir, notebooks, bytes }`. */
export async function buildLite({ quiet = false, exposeApp = false } = {}) {
  const { notebooks } = await build({ ifStale: true, quiet });
  fs.rmSync(LITE, { recursive: true, force: true });
  fs.mkdirSync(path.join(LITE, 'lab'), { recursive: true });
  for (const part of PARTS) fs.cpSync(path.join(BUILD, part), path.join(LITE, part), { recursive: true });
  // window.jupyterapp only in a site built for the browser tests (--expose-app)
  const config = { ...pageConfig(readAppConfig()), siteRelative: 'true', exposeAppInBrowser: exposeApp ? 'true' : 'false' };
  fs.writeFileSync(
    path.join(LITE, 'lab', 'index.html'),
    `<!doctype html>
<html lang="en">
<head>
  <meta charset="utf-8">
  <meta name="viewport" content="width=device-width, initial-scale=1">
  <title>Stepwell</title>
  <link rel="icon" href="data:,">
  <script id="jupyter-config-data" type="application/json">${escapeForScript(JSON.stringify(config, null, 2))}</script>
</head>
<body>
  <script src="../static/main.js"></script>
</body>
</html>
`
  );
  const first = notebooks[0];
  const target = first ? liteNotebookUrl(first) : 'lab/index.html';
  fs.writeFileSync(
    path.join(LITE, 'index.html'),
    `<!doctype html><meta charset="utf-8"><title>Stepwell</title><link rel="icon" href="data:,"><meta http-equiv="refresh" content="0; url=${target}"><a href="${target}">${target}</a>\n`
  );
  let bytes = 0;
  const walk = p => {
    const st = fs.statSync(p);
    if (st.isDirectory()) for (const f of fs.readdirSync(p)) walk(path.join(p, f));
    else bytes += st.size;
  };
  walk(LITE);
  if (!quiet) {
    console.log(`stepwell: static site in ${path.relative(ROOT, LITE)}/ (${(bytes / 1e6).toFixed(0)} MB, ${notebooks.length} notebook(s)).`);
    console.log('  Serve the folder from any static web server, at its root or under a sub-path such as /stepwell/;');
    console.log(`  open <site>/ or <site>/${target}.`);
  }
  return { dir: LITE, notebooks, bytes };
}

if (import.meta.url === `file://${process.argv[1]}`) {
  buildLite({ exposeApp: process.argv.includes('--expose-app') }).catch(err => {
    console.error(`stepwell: ${err.message}`);
    process.exit(1);
  });
}
