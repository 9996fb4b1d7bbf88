// Where the embedded app's inputs and outputs live. Shared by the build, start and serve scripts.
import { fileURLToPath } from 'node:url';
import path from 'node:path';
import fs from 'node:fs';

/** Repository root (two levels above this file). */
export const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..', '..');
/** Everything the build writes goes below this folder (gitignored). */
export const BUILD = path.join(ROOT, 'build');
/** Webpack output: bundles and emitted assets, served under /static/. */
export const STATIC = path.join(BUILD, 'static');
/** Generated source modules the bundle imports (plugin list). */
export const GEN = path.join(BUILD, 'gen');
/** Folder whose notebooks become the read-only demo contents. */
export const DEMO_DIR = process.env.STEPWELL_CONTENTS_DIR
  ? path.resolve(process.env.STEPWELL_CONTENTS_DIR)
  : path.join(ROOT, 'demo-notebooks');
/** Fallback contents when the demo folder holds no notebook yet. */
export const FIXTURE_DIR = path.join(ROOT, 'src', 'host', 'fixtures');

/** The host configuration (plugin packages, disabled plugin ids). */
export function readAppConfig() {
  return JSON.parse(fs.readFileSync(path.join(ROOT, 'src', 'host', 'app.json'), 'utf8'));
}

/** Read a package's package.json as resolved from the repository root. */
export function readPackageJson(name) {
  const file = name === '.' ? path.join(ROOT, 'package.json') : path.join(ROOT, 'node_modules', name, 'package.json');
  return { dir: path.dirname(file), pkg: JSON.parse(fs.readFileSync(file, 'utf8')) };
}
