// `npm run build:wheel`: the Python wheel dist/stepwell-<version>-py3-none-any.whl, holding the
// prebuilt extension (share/jupyter/labextensions/stepwell) and the `stepwell` Python package
// (the %%stepwell IPython magic). Builds the prebuilt extension when stale, then runs the
// hatchling backend of pyproject.toml from the project's .venv (no download at build time).
// Usage: node src/package/wheel.mjs [--install]   (--install: also install it into .venv, as the
// browser tests of the real server use it; it replaces a development-mode install)
import fs from 'node:fs';
import path from 'node:path';
import { spawnSync } from 'node:child_process';
import { ROOT, readPackageJson } from '../host/paths.mjs';
import { buildLabextension } from './labextension.mjs';
import { installWheel } from './lab-server.mjs';
import { ensureVenv, pipEnv } from './venv.mjs';

/** Folder of built wheels (gitignored). */
export const DIST = path.join(ROOT, 'dist');

/** File name of the wheel of the current package.json version. */
export function wheelName() {
  const { version } = readPackageJson('.').pkg;
  return `stepwell-${version}-py3-none-any.whl`;
}

/** Build the wheel; returns its path. */
export function buildWheel({ quiet = false } = {}) {
  const python = ensureVenv({ quiet });
  buildLabextension({ ifStale: true, quiet });
  const t0 = Date.now();
  fs.mkdirSync(DIST, { recursive: true });
  for (const f of fs.readdirSync(DIST)) if (/^stepwell-.*\.whl$/.test(f)) fs.rmSync(path.join(DIST, f));
  const r = spawnSync(python, ['-m', 'pip', 'wheel', '--no-deps', '--no-build-isolation', '--quiet', '--wheel-dir', DIST, ROOT], {
    cwd: ROOT,
    env: pipEnv(),
    encoding: 'utf8'
  });
  if (r.status !== 0) throw new Error(`pip wheel failed (exit ${r.status}):\n${r.stdout}\n${r.stderr}`);
  const wheel = path.join(DIST, wheelName());
  if (!fs.existsSync(wheel)) {
    throw new Error(`pip wheel succeeded but ${path.relative(ROOT, wheel)} is missing (found: ${fs.readdirSync(DIST).join(', ') || 'nothing'})`);
  }
  if (!quiet) {
    const mb = (fs.statSync(wheel).size / 1e6).toFixed(2);
    console.log(`stepwell: built ${path.relative(ROOT, wheel)} (${mb} MB) in ${((Date.now() - t0) / 1000).toFixed(1)} s`);
  }
  return wheel;
}

if (import.meta.url === `file://${process.argv[1]}`) {
  try {
    const wheel = buildWheel();
    if (process.argv.includes('--install')) {
      installWheel(wheel);
      console.log(`stepwell: installed ${path.basename(wheel)} into .venv`);
    }
  } catch (err) {
    console.error(`stepwell: ${err.message}`);
    process.exit(1);
  }
}
