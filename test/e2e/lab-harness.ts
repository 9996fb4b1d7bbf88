/**
 * Browser-test harness for Stepwell inside a real Jupyter server (JupyterLab or Notebook 7)
 * from the project's .venv, with the wheel installed. `npm run test:e2e` provisions .venv and
 * installs the freshly built wheel (`node src/package/wheel.mjs --install`) before jest runs.
 *
 * - `requireWheelInstalled()` fails early, naming the command, when that did not happen.
 * - `startJupyterServer()` runs `node src/package/lab-server.mjs serve …` as a child process and
 *   reads the origin and token it prints.
 * - `workFolder()` makes a fresh folder under test-output/ holding copies of the demo notebooks.
 * - `runInVenv()` runs a command of .venv/bin with the project-local Jupyter folders.
 */
import { spawn, spawnSync, type ChildProcess, type SpawnSyncReturns } from 'child_process';
import * as fs from 'fs';
import * as path from 'path';
import type { Page } from 'playwright-core';
import { OUTPUT_DIR, ROOT } from './harness';

const LAB_SERVER = path.join(ROOT, 'src', 'package', 'lab-server.mjs');
/** Where a wheel install puts the prebuilt extension. */
const INSTALLED = path.join(ROOT, '.venv', 'share', 'jupyter', 'labextensions', 'stepwell', 'package.json');
/** The demo notebooks. */
export const DEMO_DIR = path.join(ROOT, 'demo-notebooks');

/** Throws unless .venv exists with the wheel (not a development link) installed. */
export function requireWheelInstalled(): void {
  const how = 'run `npm run test:e2e` (it runs `node src/package/wheel.mjs --install`), or that command alone';
  if (!fs.existsSync(path.join(ROOT, '.venv', 'bin', 'python'))) {
    throw new Error(`the Python environment .venv is missing: ${how}`);
  }
  if (!fs.existsSync(INSTALLED) || fs.lstatSync(path.dirname(INSTALLED)).isSymbolicLink()) {
    throw new Error(`the stepwell wheel is not installed in .venv (${fs.existsSync(INSTALLED) ? 'a development-mode link is' : 'nothing is'}): ${how}`);
  }
}

/** A fresh folder test-output/<name>/ with `work/` holding copies of the demo notebooks. */
export function workFolder(name: string): { base: string; work: string; state: string } {
  const base = path.join(OUTPUT_DIR, name);
  fs.rmSync(base, { recursive: true, force: true });
  const work = path.join(base, 'work');
  fs.mkdirSync(work, { recursive: true });
  for (const f of fs.readdirSync(DEMO_DIR).filter(n => n.endsWith('.ipynb'))) fs.copyFileSync(path.join(DEMO_DIR, f), path.join(work, f));
  return { base, work, state: path.join(base, 'state') };
}

/** A running Jupyter server. */
export interface IJupyterServer {
  origin: string;
  token: string;
  /** URL of a notebook (JupyterLab: /lab/tree/…, Notebook 7: /notebooks/…) with the token. */
  url(notebook: string): string;
  /** Everything the launcher and the server printed. */
  output(): string;
  stop(): Promise<void>;
}

/** Start `jupyter lab` or `jupyter notebook` on a free loopback port serving `root`. */
export async function startJupyterServer(options: { app?: 'lab' | 'notebook'; root: string; state: string; timeoutMs?: number }): Promise<IJupyterServer> {
  const { app = 'lab', root, state, timeoutMs = 120_000 } = options;
  const log = path.join(state, '..', `${app}-server.log`);
  const child: ChildProcess = spawn(
    process.execPath,
    [LAB_SERVER, 'serve', '--root', root, '--state', state, '--app', app, '--expose', '--log', log],
    { cwd: ROOT, stdio: ['ignore', 'pipe', 'pipe'] }
  );
  let out = '';
  const line = await new Promise<RegExpExecArray>((resolve, reject) => {
    const timer = setTimeout(() => reject(new Error(`no server line within ${timeoutMs} ms:\n${out}`)), timeoutMs);
    const onData = (chunk: Buffer): void => {
      out += chunk.toString();
      const m = /Jupyter server at (http:\/\/127\.0\.0\.1:\d+)\/\?token=([0-9a-f]+)/.exec(out);
      if (m) {
        clearTimeout(timer);
        resolve(m);
      }
    };
    child.stdout?.on('data', onData);
    child.stderr?.on('data', onData);
    child.once('exit', code => {
      clearTimeout(timer);
      reject(new Error(`the server launcher exited with code ${code}:\n${out}`));
    });
  });
  const [, origin, token] = line;
  const encode = (nb: string): string => nb.split('/').map(encodeURIComponent).join('/');
  return {
    origin,
    token,
    url: nb => `${origin}${app === 'notebook' ? '/notebooks/' : '/lab/tree/'}${encode(nb)}?token=${token}`,
    output: () => `${out}\n--- server log ---\n${fs.existsSync(log) ? fs.readFileSync(log, 'utf8') : ''}`,
    stop: () =>
      new Promise<void>(resolve => {
        if (child.exitCode !== null) return resolve();
        child.once('exit', () => resolve());
        child.kill('SIGTERM'); // the launcher stops the server, which shuts its kernels down
      })
  };
}

/** Run a command of .venv/bin (e.g. `jupyter nbconvert …`) with the project-local Jupyter folders. */
export function runInVenv(command: string, args: string[], cwd: string, timeoutMs = 180_000): SpawnSyncReturns<string> {
  return spawnSync(process.execPath, [LAB_SERVER, 'run', command, ...args], { cwd, encoding: 'utf8', timeout: timeoutMs });
}

/** A notebook file read from disk. */
export interface INotebookFile {
  metadata: Record<string, unknown>;
  cells: { id?: string; cell_type: string; source: string | string[]; metadata: Record<string, unknown>; outputs?: unknown[] }[];
}

/**
 * Read and parse a notebook from disk, with multi-line text as one string: nbformat may store
 * a source or an output's text either as one string or as a list of lines (the server writes
 * lists), which mean the same.
 */
export function readNotebook(file: string): INotebookFile {
  const nb = JSON.parse(fs.readFileSync(file, 'utf8')) as INotebookFile;
  const join = (v: unknown): unknown => (Array.isArray(v) && v.every(x => typeof x === 'string') ? v.join('') : v);
  for (const cell of nb.cells) {
    cell.source = join(cell.source) as string;
    for (const out of (cell.outputs ?? []) as { data?: Record<string, unknown>; text?: unknown }[]) {
      if (out.data) for (const k of Object.keys(out.data)) out.data[k] = join(out.data[k]);
      if (out.text !== undefined) out.text = join(out.text);
    }
  }
  return nb;
}

/** A cell's source as one string. */
export const sourceOf = (cell: INotebookFile['cells'][number]): string => (Array.isArray(cell.source) ? cell.source.join('') : cell.source);

/** Wait until the current notebook's kernel is idle (started and answering). */
export async function waitForKernelIdle(page: Page, timeoutMs = 90_000): Promise<void> {
  await page.waitForFunction(
    () => {
      const app = (window as unknown as { jupyterapp?: { shell: { currentWidget: unknown } } }).jupyterapp;
      const w = app?.shell.currentWidget as { sessionContext?: { session?: { kernel?: { status: string } } } } | null;
      return w?.sessionContext?.session?.kernel?.status === 'idle';
    },
    undefined,
    { timeout: timeoutMs, polling: 250 }
  );
}

/**
 * Run code in the current notebook's kernel (not through a cell) and return the text/plain value
 * of `expression` evaluated afterwards: the tests' way to ask the kernel (NumPy) for check values.
 */
export async function kernelValue(page: Page, code: string, expression: string): Promise<string> {
  return page.evaluate(
    async ([c, e]) => {
      const app = (window as unknown as { jupyterapp?: { shell: { currentWidget: unknown } } }).jupyterapp;
      const w = app?.shell.currentWidget as {
        sessionContext?: { session?: { kernel?: { requestExecute(content: unknown): { done: Promise<{ content: Record<string, unknown> }> } } } };
      } | null;
      const kernel = w?.sessionContext?.session?.kernel;
      if (!kernel) throw new Error('the current notebook has no kernel');
      const reply = await kernel.requestExecute({ code: c, silent: true, store_history: false, user_expressions: { v: e } }).done;
      const v = (reply.content.user_expressions as Record<string, { status: string; data?: Record<string, string>; evalue?: string }>).v;
      if (v.status !== 'ok') throw new Error(`kernel: ${v.evalue}`);
      return v.data?.['text/plain'] ?? '';
    },
    [code, expression] as const
  );
}
