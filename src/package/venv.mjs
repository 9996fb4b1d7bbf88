// The project-local Python environment `.venv/` (gitignored): a real Jupyter server, a Python
// kernel and the wheel's build backend, at the versions pinned in requirements.txt and
// constraints.txt beside this file. Created on first use; re-synced when those files change.
// Usage: node src/package/venv.mjs   (`npm run setup:python`)
// The interpreter is `python3` on PATH (3.9 or newer, with the venv module), or STEPWELL_PYTHON.
import crypto from 'node:crypto';
import fs from 'node:fs';
import path from 'node:path';
import { spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { ROOT } from '../host/paths.mjs';

const HERE = path.dirname(fileURLToPath(import.meta.url));
/** The environment's folder. */
export const VENV = path.join(ROOT, '.venv');
const REQUIREMENTS = path.join(HERE, 'requirements.txt');
const CONSTRAINTS = path.join(HERE, 'constraints.txt');
/** Hash of the pin files the environment was last synced with. */
const STAMP = path.join(VENV, '.stepwell-pins');

/** Path of an executable inside the environment (`python`, `jupyter`, `pip`, …). */
export function venvBin(name) {
  return path.join(VENV, process.platform === 'win32' ? 'Scripts' : 'bin', process.platform === 'win32' ? `${name}.exe` : name);
}

/** Environment for child processes: pip fails at once on an unreachable index instead of retrying for minutes. */
export function pipEnv(env = process.env) {
  return { ...env, PIP_RETRIES: '0', PIP_DISABLE_PIP_VERSION_CHECK: '1', PIP_NO_INPUT: '1' };
}

function pinsHash() {
  const h = crypto.createHash('sha256');
  for (const f of [REQUIREMENTS, CONSTRAINTS]) h.update(fs.readFileSync(f));
  return h.digest('hex');
}

function run(cmd, args, { quiet, what }) {
  const r = spawnSync(cmd, args, { cwd: ROOT, env: pipEnv(), stdio: quiet ? 'pipe' : 'inherit', encoding: 'utf8' });
  if (r.error) throw new Error(`${what}: cannot run ${cmd} (${r.error.message})`);
  if (r.status !== 0) {
    const output = quiet ? `\n${r.stdout}\n${r.stderr}` : ' (see the output above)';
    throw new Error(`${what} failed with exit code ${r.status}${output}`);
  }
  return r.stdout;
}

/** The base interpreter, checked to be Python 3.9 or newer with the venv module. */
function baseInterpreter() {
  const python = process.env.STEPWELL_PYTHON || 'python3';
  const r = spawnSync(python, ['-c', 'import sys, venv; print("%d.%d" % sys.version_info[:2])'], { encoding: 'utf8' });
  if (r.error || r.status !== 0) {
    throw new Error(
      `${python} cannot make a virtual environment (${r.error ? r.error.message : r.stderr.trim().split('\n').pop()}): ` +
        'install Python 3.9 or newer with its venv module (Debian: apt-get install python3-venv), or set STEPWELL_PYTHON to such an interpreter'
    );
  }
  const [major, minor] = r.stdout.trim().split('.').map(Number);
  if (major < 3 || (major === 3 && minor < 9)) {
    throw new Error(`${python} is Python ${r.stdout.trim()}; the pinned JupyterLab needs 3.9 or newer: set STEPWELL_PYTHON to a newer interpreter`);
  }
  return python;
}

/** Whether the environment exists and matches the pin files. */
export function venvIsCurrent() {
  return fs.existsSync(venvBin('python')) && fs.existsSync(STAMP) && fs.readFileSync(STAMP, 'utf8') === pinsHash();
}

/**
 * Create `.venv/` if it is missing and install the pinned packages if the pin files changed since
 * the last sync. Returns the environment's python. Throws with an actionable message on failure.
 */
export function ensureVenv({ quiet = false } = {}) {
  if (venvIsCurrent()) return venvBin('python');
  const say = msg => quiet || console.log(`stepwell: ${msg}`);
  if (!fs.existsSync(venvBin('python'))) {
    const python = baseInterpreter();
    say(`creating the Python environment ${path.relative(ROOT, VENV)}/ with ${python}…`);
    run(python, ['-m', 'venv', VENV], { quiet, what: `${python} -m venv ${VENV}` });
  }
  say('installing the pinned Python packages (jupyterlab, notebook, ipykernel, numpy, hatchling; about a minute the first time)…');
  fs.rmSync(STAMP, { force: true });
  run(venvBin('python'), ['-m', 'pip', 'install', '--quiet', '-r', REQUIREMENTS, '-c', CONSTRAINTS], {
    quiet,
    what: 'pip install of src/package/requirements.txt (PyPI must be reachable)'
  });
  fs.writeFileSync(STAMP, pinsHash());
  say(`Python environment ready: ${path.relative(ROOT, VENV)}/`);
  return venvBin('python');
}

if (import.meta.url === `file://${process.argv[1]}`) {
  try {
    ensureVenv();
  } catch (err) {
    console.error(`stepwell: ${err.message}`);
    process.exit(1);
  }
}
