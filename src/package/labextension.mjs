// The prebuilt (federated) JupyterLab extension: the extension's layers compiled by tsc into
// lib/ (package.json `main`), then bundled by @jupyter/builder (rspack with module federation,
// the builder of JupyterLab 4.6) into stepwell/labextension/, the folder the wheel ships.
// Usage: node src/package/labextension.mjs [--development] [--if-stale]   (`npm run build:labextension`)
// No Python is needed: the builder gets JupyterLab's core package list from @jupyterlab/core-meta.
import fs from 'node:fs';
import path from 'node:path';
import { spawnSync } from 'node:child_process';
import { createRequire } from 'node:module';
import { ROOT } from '../host/paths.mjs';
import { writeDocs } from '../host/assets.mjs';

const require = createRequire(import.meta.url);
/** Where the prebuilt extension is written (package.json `jupyterlab.outputDir`). */
export const LABEXTENSION = path.join(ROOT, 'stepwell', 'labextension');
const LIB = path.join(ROOT, 'lib');
const STAMP = path.join(ROOT, '.cache', 'labextension-stamp.json');
/** Everything the prebuilt extension is made from. */
const INPUTS = [
  ...['plugin', 'ui', 'worker', 'ledger', 'experiment', 'core'].map(d => path.join('src', d)),
  'style',
  'schema',
  'package.json',
  'package-lock.json',
  'tsconfig.json',
  'tsconfig.lib.json',
  'README.md',
  'DEVELOPERS.md'
];

function inputsKey(mode) {
  const files = [];
  const walk = p => {
    if (!fs.existsSync(p)) return;
    const st = fs.statSync(p);
    if (st.isDirectory()) for (const f of fs.readdirSync(p)) walk(path.join(p, f));
    else files.push([path.relative(ROOT, p), st.mtimeMs]);
  };
  INPUTS.forEach(i => walk(path.join(ROOT, i)));
  return JSON.stringify({ mode, count: files.length, newest: Math.max(0, ...files.map(f => f[1])), names: files.map(f => f[0]).sort().join('\n') });
}

/** Whether stepwell/labextension is missing or older than its inputs (or built in the other mode). */
export function labextensionIsStale(mode = 'production') {
  if (!fs.existsSync(path.join(LABEXTENSION, 'package.json')) || !fs.existsSync(STAMP)) return true;
  return fs.readFileSync(STAMP, 'utf8') !== inputsKey(mode);
}

function run(what, args) {
  const r = spawnSync(process.execPath, args, { cwd: ROOT, encoding: 'utf8' });
  if (r.status !== 0) throw new Error(`${what} failed (exit ${r.status}):\n${r.stdout}\n${r.stderr}`);
  return r.stdout;
}

/**
 * Build the prebuilt extension. `development` keeps it unminified with source maps; `ifStale`
 * skips the build when nothing changed. Returns `{ built, seconds, bytes }`.
 */
export function buildLabextension({ development = false, ifStale = false, quiet = false } = {}) {
  const mode = development ? 'development' : 'production';
  if (ifStale && !labextensionIsStale(mode)) {
    if (!quiet) console.log('stepwell: prebuilt extension up to date');
    return { built: false, seconds: 0, bytes: folderBytes(LABEXTENSION) };
  }
  const t0 = Date.now();
  const key = inputsKey(mode);
  if (!quiet) console.log(`stepwell: building the prebuilt extension (${mode})…`);
  // A clean lib/ so that a deleted source file cannot linger in the bundle.
  fs.rmSync(LIB, { recursive: true, force: true });
  run('tsc -p tsconfig.lib.json', [require.resolve('typescript/bin/tsc'), '-p', 'tsconfig.lib.json']);
  const builder = path.join(path.dirname(require.resolve('@jupyter/builder/package.json')), 'lib', 'build-labextension.js');
  const core = require.resolve('@jupyterlab/core-meta/core.package.json');
  run('@jupyter/builder build-labextension', [builder, '--core-package-file', core, ...(development ? ['--development'] : []), ROOT]);
  // The documentation the About dialog links to, served with the extension's static files.
  writeDocs(path.join(LABEXTENSION, 'static', 'docs'));
  fs.mkdirSync(path.dirname(STAMP), { recursive: true });
  fs.writeFileSync(STAMP, key);
  const seconds = (Date.now() - t0) / 1000;
  const bytes = folderBytes(LABEXTENSION);
  if (!quiet) console.log(`stepwell: prebuilt extension in ${path.relative(ROOT, LABEXTENSION)}/ (${(bytes / 1e6).toFixed(1)} MB) in ${seconds.toFixed(1)} s`);
  return { built: true, seconds, bytes };
}

function folderBytes(dir) {
  let total = 0;
  const walk = p => {
    const st = fs.statSync(p);
    if (st.isDirectory()) for (const f of fs.readdirSync(p)) walk(path.join(p, f));
    else total += st.size;
  };
  if (fs.existsSync(dir)) walk(dir);
  return total;
}

if (import.meta.url === `file://${process.argv[1]}`) {
  try {
    buildLabextension({ development: process.argv.includes('--development'), ifStale: process.argv.includes('--if-stale') });
  } catch (err) {
    console.error(`stepwell: ${err.message}`);
    process.exit(1);
  }
}
