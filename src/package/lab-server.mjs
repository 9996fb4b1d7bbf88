// A real Jupyter server (JupyterLab or Notebook 7) from the project's .venv, on loopback, with
// every Jupyter and IPython folder inside the project (.jupyter-local/) so nothing of the user's
// own Jupyter setup is read or written. Used by `npm run start:lab` and the browser tests.
import crypto from 'node:crypto';
import fs from 'node:fs';
import net from 'node:net';
import path from 'node:path';
import { spawn, spawnSync } from 'node:child_process';
import { DEMO_DIR, ROOT } from '../host/paths.mjs';
import { pipEnv, VENV, venvBin } from './venv.mjs';

/** Project-local Jupyter folders (gitignored). */
export const JUPYTER_LOCAL = path.join(ROOT, '.jupyter-local');
/** Where the prebuilt extension sits inside the environment. */
const INSTALLED_LABEXTENSION = path.join(VENV, 'share', 'jupyter', 'labextensions', 'stepwell');

/** Environment of Jupyter processes: config, data, runtime and IPython folders under `base`. */
export function jupyterEnv(base = JUPYTER_LOCAL, env = process.env) {
  return {
    ...pipEnv(env),
    JUPYTER_CONFIG_DIR: path.join(base, 'config'),
    JUPYTER_DATA_DIR: path.join(base, 'data'),
    JUPYTER_RUNTIME_DIR: path.join(base, 'runtime'),
    IPYTHONDIR: path.join(base, 'ipython'),
    JUPYTER_PLATFORM_DIRS: '1',
    // The kernel's stdout must not wait on a terminal; and no telemetry-like network access.
    PYTHONUNBUFFERED: '1'
  };
}

/** A free TCP port on 127.0.0.1. */
export function freePort() {
  return new Promise((resolve, reject) => {
    const server = net.createServer();
    server.once('error', reject);
    server.listen(0, '127.0.0.1', () => {
      const { port } = server.address();
      server.close(() => resolve(port));
    });
  });
}

function runPython(args, what, extraEnv = {}) {
  const r = spawnSync(venvBin('python'), args, { cwd: ROOT, env: { ...jupyterEnv(), ...extraEnv }, encoding: 'utf8' });
  if (r.status !== 0) throw new Error(`${what} failed (exit ${r.status}):\n${r.stdout}\n${r.stderr}`);
  return r.stdout;
}

/**
 * Remove the development-mode link to stepwell/labextension, if there is one. pip must never
 * see it: uninstalling through the link would move the build output away.
 */
function dropDevelopLink() {
  let st = null;
  try {
    st = fs.lstatSync(INSTALLED_LABEXTENSION);
  } catch {
    return;
  }
  if (st.isSymbolicLink()) fs.unlinkSync(INSTALLED_LABEXTENSION);
}

/** Install a built wheel into .venv (replacing a development-mode install). */
export function installWheel(wheel) {
  dropDevelopLink();
  runPython(['-m', 'pip', 'install', '--quiet', '--no-deps', '--force-reinstall', wheel], `pip install ${path.basename(wheel)}`);
}

/**
 * Install Stepwell into .venv in development mode: the Python package editable from the
 * checkout, and the prebuilt extension linked to stepwell/labextension (so a rebuild shows on
 * the next page load).
 */
export function installDevelop() {
  dropDevelopLink();
  runPython(['-m', 'pip', 'install', '--quiet', '--no-deps', '--no-build-isolation', '--editable', ROOT], 'pip install --editable .', {
    SKIP_JUPYTER_BUILDER: '1' // the caller built the prebuilt extension already
  });
  // `jupyter labextension develop` of JupyterLab 4.6 hands over to this command (and needs it on PATH).
  const r = spawnSync(venvBin('jupyter-builder'), ['develop', '--overwrite', ROOT], { cwd: ROOT, env: jupyterEnv(), encoding: 'utf8' });
  if (r.status !== 0) throw new Error(`jupyter-builder develop failed (exit ${r.status}):\n${r.stdout}\n${r.stderr}`);
}

/**
 * Copy the demo notebooks into `workDir`. A notebook already there is never overwritten (it may
 * hold the user's work). Returns `{ copied, kept }` as relative paths.
 */
export function copyDemos(workDir, source = DEMO_DIR) {
  const copied = [];
  const kept = [];
  fs.mkdirSync(workDir, { recursive: true });
  for (const f of fs.readdirSync(source).filter(n => n.endsWith('.ipynb')).sort()) {
    const target = path.join(workDir, f);
    if (fs.existsSync(target)) kept.push(f);
    else {
      fs.copyFileSync(path.join(source, f), target);
      copied.push(f);
    }
  }
  return { copied, kept };
}

/**
 * User settings of a fresh state folder: no news or update checks (they poll the internet,
 * which a loopback server here does not have, and ask in a toast). Existing files are kept.
 */
function quietSettings(settingsDir) {
  const file = path.join(settingsDir, '@jupyterlab', 'apputils-extension', 'notification.jupyterlab-settings');
  if (fs.existsSync(file)) return;
  fs.mkdirSync(path.dirname(file), { recursive: true });
  fs.writeFileSync(file, JSON.stringify({ fetchNews: 'false', checkForUpdates: false }, null, 2));
}

/** URL path of a notebook in JupyterLab (`lab`) or Notebook 7 (`notebook`). */
export function notebookPath(app, notebook) {
  const rel = notebook.split('/').map(encodeURIComponent).join('/');
  return app === 'notebook' ? `/notebooks/${rel}` : `/lab/tree/${rel}`;
}

async function waitReady(origin, token, child, output, timeoutMs) {
  const t0 = Date.now();
  for (;;) {
    if (child.exitCode !== null) throw new Error(`the Jupyter server exited with code ${child.exitCode}:\n${output()}`);
    try {
      const res = await fetch(`${origin}/api/status`, { headers: { Authorization: `token ${token}` } });
      if (res.ok) return;
    } catch {
      // not listening yet
    }
    if (Date.now() - t0 > timeoutMs) throw new Error(`the Jupyter server did not answer within ${timeoutMs} ms:\n${output()}`);
    await new Promise(r => setTimeout(r, 250));
  }
}

/**
 * Start `jupyter lab` (or `jupyter notebook`) from .venv serving `root` on 127.0.0.1 and wait
 * until it answers. Settings and workspaces live in `state` (fresh per test, kept for
 * `start:lab`); the server's output is kept in memory (the last 100 kB or more) and, with
 * `logFile`, appended to that file; `exposeApp` sets `window.jupyterapp` for tests. Resolves with the origin, the token, a URL builder and `stop()`.
 */
export async function startJupyter({ app = 'lab', root, state = path.join(JUPYTER_LOCAL, 'state'), port, token, env = {}, logFile, exposeApp = false, timeoutMs = 90_000 }) {
  const actualPort = port ?? (await freePort());
  const secret = token ?? crypto.randomBytes(16).toString('hex');
  const args = [
    '-m',
    'jupyter',
    app,
    '--no-browser',
    '--ip=127.0.0.1',
    `--port=${actualPort}`,
    '--ServerApp.port_retries=0',
    `--ServerApp.root_dir=${root}`,
    `--IdentityProvider.token=${secret}`,
    '--ServerApp.open_browser=False',
    `--LabServerApp.user_settings_dir=${path.join(state, 'settings')}`,
    `--LabServerApp.workspaces_dir=${path.join(state, 'workspaces')}`,
    // No news feed or update check from the page: this machine has no internet, and tests must not depend on it.
    '--LabApp.news_url=',
    '--LabApp.check_for_updates_class=jupyterlab.NeverCheckForUpdate'
  ];
  // The browser tests drive the app through window.jupyterapp, as they do in the embedded app.
  if (exposeApp) args.push(app === 'notebook' ? '--JupyterNotebookApp.expose_app_in_browser=True' : '--LabApp.expose_app_in_browser=True');
  if (process.getuid && process.getuid() === 0) args.push('--allow-root');
  fs.mkdirSync(root, { recursive: true });
  quietSettings(path.join(state, 'settings'));
  const child = spawn(venvBin('python'), args, { cwd: root, env: { ...jupyterEnv(), ...env }, stdio: ['ignore', 'pipe', 'pipe'] });
  let log = '';
  const file = logFile ? fs.createWriteStream(logFile, { flags: 'a' }) : null;
  const onData = chunk => {
    file?.write(chunk);
    log += chunk.toString();
    if (log.length > 200_000) log = log.slice(-100_000);
  };
  child.stdout.on('data', onData);
  child.stderr.on('data', onData);
  const origin = `http://127.0.0.1:${actualPort}`;
  try {
    await waitReady(origin, secret, child, () => log, timeoutMs);
  } catch (err) {
    if (child.exitCode === null) child.kill('SIGTERM');
    throw err;
  }
  return {
    app,
    origin,
    port: actualPort,
    token: secret,
    root,
    pid: child.pid,
    /** URL of a notebook (relative to root) with the token, or of the app when none is given. */
    url: notebook => `${origin}${notebook ? notebookPath(app, notebook) : app === 'notebook' ? '/tree' : '/lab'}?token=${secret}`,
    output: () => log,
    stop: () =>
      new Promise(resolve => {
        if (child.exitCode !== null) return resolve();
        const timer = setTimeout(() => child.kill('SIGKILL'), 15_000);
        child.once('exit', () => {
          clearTimeout(timer);
          resolve();
        });
        // SIGTERM: the server shuts its kernels down before it exits.
        child.kill('SIGTERM');
      })
  };
}

/** Value of `--name VALUE` or `--name=VALUE` in argv, else undefined. */
function option(argv, name) {
  const i = argv.findIndex(a => a === name || a.startsWith(`${name}=`));
  if (i < 0) return undefined;
  return argv[i].includes('=') ? argv[i].slice(name.length + 1) : argv[i + 1];
}

/**
 * Command line for tests and scripts (the functions above are ES modules, which jest's
 * CommonJS tests cannot import):
 *   node src/package/lab-server.mjs serve --root DIR [--state DIR] [--app lab|notebook] [--expose]
 *     starts a server, prints `Jupyter server at <origin>/?token=<token>` and runs until SIGTERM;
 *   node src/package/lab-server.mjs install-wheel WHEEL | install-develop
 *   node src/package/lab-server.mjs run COMMAND ARGS…   runs a command of .venv/bin with the project-local Jupyter folders.
 */
async function cli(argv) {
  const [verb, ...rest] = argv;
  if (verb === 'install-wheel') return installWheel(path.resolve(rest[0]));
  if (verb === 'install-develop') return installDevelop();
  if (verb === 'run') {
    const r = spawnSync(venvBin(rest[0]), rest.slice(1), { stdio: 'inherit', env: jupyterEnv() });
    if (r.error) throw new Error(`cannot run ${venvBin(rest[0])}: ${r.error.message}`);
    process.exitCode = r.status ?? 1;
    return undefined;
  }
  if (verb !== 'serve') throw new Error(`unknown command ${JSON.stringify(verb)}: use serve, install-wheel, install-develop or run`);
  const root = option(rest, '--root');
  if (!root) throw new Error('serve needs --root DIR (the folder the server shows)');
  const state = option(rest, '--state');
  const app = option(rest, '--app') ?? 'lab';
  if (app !== 'lab' && app !== 'notebook') throw new Error(`--app must be lab or notebook, got ${JSON.stringify(app)}`);
  const server = await startJupyter({
    app,
    root: path.resolve(root),
    ...(state ? { state: path.resolve(state) } : {}),
    exposeApp: rest.includes('--expose'),
    logFile: option(rest, '--log')
  });
  console.log(`Jupyter server at ${server.origin}/?token=${server.token} (pid ${server.pid})`);
  const stop = () => void server.stop().then(() => process.exit(0));
  process.on('SIGINT', stop);
  process.on('SIGTERM', stop);
  return undefined;
}

if (import.meta.url === `file://${process.argv[1]}`) {
  cli(process.argv.slice(2)).catch(err => {
    console.error(`stepwell: ${err.message}`);
    process.exit(1);
  });
}
