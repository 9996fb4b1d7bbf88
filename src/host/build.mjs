// Development build of the embedded app: generate the plugin list module, run webpack (Node API,
// filesystem cache in .cache/webpack), copy the service worker to the site root, write the
// static assets. `--if-stale` skips webpack when no input is newer than the last build.
import fs from 'node:fs';
import path from 'node:path';
import { createRequire } from 'node:module';
import { BUILD, ROOT, STATIC } from './paths.mjs';
import { generateExtensionsModule } from './gen.mjs';
import { writeAssets } from './assets.mjs';

const require = createRequire(import.meta.url);
const STAMP = path.join(BUILD, '.bundle-stamp.json');

/** Folders and files whose change requires a new bundle. */
const INPUTS = ['src', 'style', 'schema', 'webpack.config.js', 'package-lock.json', 'tsconfig.json'];

function listInputs() {
  const files = [];
  const walk = p => {
    if (!fs.existsSync(p)) return;
    const st = fs.statSync(p);
    if (st.isDirectory()) {
      for (const f of fs.readdirSync(p)) if (!f.startsWith('.')) walk(path.join(p, f));
    } else {
      files.push([path.relative(ROOT, p), st.mtimeMs]);
    }
  };
  INPUTS.forEach(i => walk(path.join(ROOT, i)));
  files.sort((a, b) => (a[0] < b[0] ? -1 : 1));
  return files;
}

/** Fingerprint of the inputs: the file list and the newest modification time. */
function inputsKey() {
  const files = listInputs();
  const newest = Math.max(0, ...files.map(f => f[1]));
  return { count: files.length, newest, names: files.map(f => f[0]).join('\n').length };
}

/** Whether the bundle is missing or older than its inputs. */
export function isStale() {
  if (!fs.existsSync(path.join(STATIC, 'main.js')) || !fs.existsSync(STAMP)) return true;
  const before = JSON.parse(fs.readFileSync(STAMP, 'utf8'));
  const now = inputsKey();
  return before.count !== now.count || before.newest !== now.newest || before.names !== now.names;
}

function runWebpack() {
  const webpack = require('webpack');
  const config = require(path.join(ROOT, 'webpack.config.js'))();
  return new Promise((resolve, reject) => {
    const compiler = webpack(config);
    compiler.run((err, stats) => {
      compiler.close(() => {
        if (err) return reject(err);
        const info = stats.toJson({ all: false, errors: true, warnings: true });
        for (const w of info.warnings || []) console.warn(`webpack warning: ${w.message}`);
        if (stats.hasErrors()) {
          return reject(new Error(`webpack failed:\n${(info.errors || []).map(e => e.message).join('\n\n')}`));
        }
        resolve(stats);
      });
    });
  });
}

const LOCK = path.join(BUILD, '.build-lock');

function pidAlive(pid) {
  try {
    process.kill(pid, 0);
    return true;
  } catch (err) {
    return err.code === 'EPERM';
  }
}

/**
 * Take the build lock (a folder holding the owner's pid) so that two builds started at the same
 * time in one checkout (for example two test runs) do not write build/ together. A lock whose
 * owner has exited is taken over. Returns the release function.
 */
async function acquireLock(timeoutMs = 10 * 60_000) {
  fs.mkdirSync(BUILD, { recursive: true });
  const t0 = Date.now();
  let told = false;
  for (;;) {
    try {
      fs.mkdirSync(LOCK);
      fs.writeFileSync(path.join(LOCK, 'pid'), String(process.pid));
      return () => fs.rmSync(LOCK, { recursive: true, force: true });
    } catch (err) {
      if (err.code !== 'EEXIST') throw err;
    }
    let owner = NaN;
    try {
      owner = Number(fs.readFileSync(path.join(LOCK, 'pid'), 'utf8'));
    } catch {
      // the owner has created the folder but not yet written its pid
    }
    if (Number.isInteger(owner) && owner > 0 && !pidAlive(owner)) {
      fs.rmSync(LOCK, { recursive: true, force: true });
      continue;
    }
    if (Date.now() - t0 > timeoutMs) throw new Error(`another build (pid ${owner}) holds ${LOCK} for too long; remove it if no build is running`);
    if (!told) {
      console.log(`stepwell: waiting for another build (pid ${owner}) to finish…`);
      told = true;
    }
    await new Promise(r => setTimeout(r, 300));
  }
}

/** Build everything; with ifStale, reuse the bundle when nothing changed. Returns timing info. */
export async function build({ ifStale = false, quiet = false } = {}) {
  const release = await acquireLock();
  try {
    return await buildLocked({ ifStale, quiet });
  } finally {
    release();
  }
}

async function buildLocked({ ifStale, quiet }) {
  const t0 = Date.now();
  let bundled = false;
  if (!ifStale || isStale()) {
    const key = inputsKey();
    generateExtensionsModule();
    if (!quiet) console.log('stepwell: bundling the app (webpack, development mode)…');
    await runWebpack();
    fs.copyFileSync(path.join(STATIC, 'service-worker.js'), path.join(BUILD, 'service-worker.js'));
    fs.writeFileSync(STAMP, JSON.stringify(key));
    bundled = true;
  }
  const notebooks = writeAssets();
  const seconds = (Date.now() - t0) / 1000;
  if (!quiet) {
    console.log(`stepwell: ${bundled ? 'built' : 'bundle up to date'} in ${seconds.toFixed(1)} s; ${notebooks.length} notebook(s) in the contents index`);
  }
  return { bundled, seconds, notebooks };
}

if (import.meta.url === `file://${process.argv[1]}`) {
  build({ ifStale: process.argv.includes('--if-stale') }).catch(err => {
    console.error(`stepwell build failed: ${err.message}`);
    process.exit(1);
  });
}
