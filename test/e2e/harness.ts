/**
 * Browser-test harness for the embedded Stepwell app.
 *
 * - `ensureBuilt()` runs the development build when its inputs changed (src/host/build.mjs --if-stale).
 * - `startApp()` starts src/host/serve.mjs on a free loopback port as a child process and reads
 *   the URL it prints, exactly as `npm start` would show it to a user.
 * - `launchBrowser()` starts Debian's Chromium through playwright-core with a fresh profile and
 *   records console errors, uncaught page errors and failed requests.
 * - `openNotebook()`, `executeCommand()`, `runPaletteCommand()`, `screenshot()` drive the page.
 */
import { spawn, spawnSync, type ChildProcess } from 'child_process';
import * as fs from 'fs';
import * as os from 'os';
import * as path from 'path';
import { chromium, type BrowserContext, type Page } from 'playwright-core';

/** Repository root. */
export const ROOT = path.resolve(__dirname, '..', '..');
/** Screenshots and other test artefacts (gitignored). */
export const OUTPUT_DIR = path.join(ROOT, 'test-output');
/** Chromium from Debian's `chromium` package. */
export const CHROMIUM = process.env.STEPWELL_CHROMIUM || '/usr/bin/chromium';
/** Flags for a quiet, sandbox-free headless Chromium on a CI machine. */
export const CHROMIUM_ARGS = [
  '--headless',
  '--no-sandbox',
  '--disable-gpu',
  '--disable-background-networking',
  '--disable-component-update',
  '--no-first-run',
  '--disable-quic',
  '--disable-sync'
];

/** Build the app unless the bundle is up to date. Throws with the build output on failure. */
export function ensureBuilt(): void {
  const r = spawnSync(process.execPath, [path.join(ROOT, 'src', 'host', 'build.mjs'), '--if-stale'], {
    cwd: ROOT,
    encoding: 'utf8',
    timeout: 5 * 60_000
  });
  if (r.status !== 0) {
    throw new Error(`build failed (exit ${r.status}):\n${r.stdout}\n${r.stderr}`);
  }
}

/** A running app server. */
export interface IAppServer {
  /** The URL the server printed (opens the first demo notebook). */
  url: string;
  /** `http://127.0.0.1:<port>` */
  origin: string;
  port: number;
  /** Everything the server wrote, for diagnostics. */
  output(): string;
  stop(): Promise<void>;
}

/** How to start the app server. */
export interface IStartOptions {
  /** Script under src/host/ to run: `serve.mjs` (default) or `start.mjs` (what `npm start` runs). */
  script?: 'serve.mjs' | 'start.mjs';
  /** Command-line arguments; default `--port 0` (any free port). */
  args?: string[];
  /** Extra environment variables. */
  env?: Record<string, string>;
  timeoutMs?: number;
}

/** Start the static server (by default on a free loopback port) and wait for its URL line. */
export async function startApp(options: IStartOptions = {}): Promise<IAppServer> {
  const { script = 'serve.mjs', args = ['--port', '0'], env = {}, timeoutMs = 120_000 } = options;
  const child: ChildProcess = spawn(process.execPath, [path.join(ROOT, 'src', 'host', script), ...args], {
    cwd: ROOT,
    env: { ...process.env, STEPWELL_EXPOSE_APP: '1', ...env },
    stdio: ['ignore', 'pipe', 'pipe']
  });
  let out = '';
  const url = await new Promise<string>((resolve, reject) => {
    const timer = setTimeout(() => reject(new Error(`server printed no URL within ${timeoutMs} ms:\n${out}`)), timeoutMs);
    const onData = (chunk: Buffer) => {
      out += chunk.toString();
      const m = /(http:\/\/127\.0\.0\.1:\d+\/\S*)/.exec(out);
      if (m) {
        clearTimeout(timer);
        resolve(m[1]);
      }
    };
    child.stdout!.on('data', onData);
    child.stderr!.on('data', onData);
    child.once('exit', code => {
      clearTimeout(timer);
      reject(new Error(`server exited with code ${code}:\n${out}`));
    });
  });
  const origin = new URL(url).origin;
  return {
    url,
    origin,
    port: Number(new URL(url).port),
    output: () => out,
    stop: () =>
      new Promise<void>(resolve => {
        if (child.exitCode !== null) return resolve();
        child.once('exit', () => resolve());
        child.kill('SIGTERM');
      })
  };
}

/** A browser with one page and what it reported. */
export interface IBrowserSession {
  context: BrowserContext;
  page: Page;
  /** Text of `console.error` messages. */
  consoleErrors: string[];
  /** Text of `console.warn` messages. */
  consoleWarnings: string[];
  /** Uncaught exceptions and unhandled rejections in the page. */
  pageErrors: Error[];
  /** Responses with status >= 400 and requests that failed, as "STATUS URL". */
  failedRequests: string[];
  /** Requests to any host but this machine's loopback (the network monitor): each one fails {@link ourErrors}. */
  foreignRequests: string[];
  /** The fresh profile folder (removed by close()). */
  userDataDir: string;
  close(): Promise<void>;
}

/** Launch Chromium with a fresh profile and start recording errors. */
export async function launchBrowser(viewport = { width: 1400, height: 900 }): Promise<IBrowserSession> {
  if (!fs.existsSync(CHROMIUM)) {
    throw new Error(`Chromium not found at ${CHROMIUM}: install the Debian package \`chromium\` or set STEPWELL_CHROMIUM`);
  }
  const userDataDir = fs.mkdtempSync(path.join(os.tmpdir(), 'stepwell-chromium-'));
  const context = await chromium.launchPersistentContext(userDataDir, {
    executablePath: CHROMIUM,
    headless: true,
    args: CHROMIUM_ARGS,
    viewport
  });
  const page = context.pages()[0] ?? (await context.newPage());
  const session: IBrowserSession = {
    context,
    page,
    consoleErrors: [],
    consoleWarnings: [],
    pageErrors: [],
    failedRequests: [],
    foreignRequests: [],
    userDataDir,
    close: async () => {
      await context.close();
      fs.rmSync(userDataDir, { recursive: true, force: true });
    }
  };
  page.on('console', msg => {
    if (msg.type() === 'warning') session.consoleWarnings.push(msg.text());
    if (msg.type() !== 'error') return;
    const where = msg.location();
    // "Failed to load resource" carries its URL only in the location.
    session.consoleErrors.push(/Failed to load resource/.test(msg.text()) && where.url ? `${msg.text()} (${where.url})` : msg.text());
  });
  page.on('pageerror', err => session.pageErrors.push(err));
  // The network monitor: pages, workers and service workers of the context alike.
  context.on('request', req => {
    if (isForeign(req.url())) session.foreignRequests.push(`${req.method()} ${req.url()}`);
  });
  page.on('response', res => {
    if (res.status() >= 400) session.failedRequests.push(`${res.status()} ${res.url()}`);
  });
  page.on('requestfailed', req => session.failedRequests.push(`failed ${req.url()} ${req.failure()?.errorText ?? ''}`));
  return session;
}

/**
 * JupyterLab renders a markdown cell's HTML first and swaps `attachment:` image URLs for data URLs
 * afterwards, so the browser always tries (and fails) to load `attachment:…` once. Any markdown
 * cell with an attachment does that (a decision record's image among them); it is no fault. When
 * the swap comes first the attempt is reported as aborted instead.
 */
export const ATTACHMENT_PROBE = /ERR_UNKNOWN_URL_SCHEME \(attachment:|^failed attachment:\S+ net::ERR_(UNKNOWN_URL_SCHEME|ABORTED)/;

/**
 * True for a request that leaves the machine: an http(s) or ws(s) URL whose host is not the
 * loopback interface the app's servers listen on. `data:`, `blob:` and `attachment:` URLs stay in
 * the page.
 */
export function isForeign(url: string): boolean {
  let u: URL;
  try {
    u = new URL(url);
  } catch {
    return true;
  }
  if (!['http:', 'https:', 'ws:', 'wss:'].includes(u.protocol)) return false;
  return !['127.0.0.1', 'localhost', '[::1]'].includes(u.hostname);
}

/** Failed requests other than the attachment probe above. */
export function failedRequests(session: IBrowserSession): string[] {
  return session.failedRequests.filter(r => !ATTACHMENT_PROBE.test(r));
}

/**
 * Errors that must fail a test: every uncaught page error, and console errors that name Stepwell
 * or report a plugin that failed to activate.
 */
export function ourErrors(session: IBrowserSession): string[] {
  const mine = /stepwell|failed to activate|could not start/i;
  const attachmentProbe = ATTACHMENT_PROBE;
  return [
    ...session.pageErrors.map(e => `page error: ${e.stack ?? e.message}`),
    ...session.foreignRequests.map(r => `request beyond the app's origin: ${r}`),
    ...session.consoleErrors.filter(t => mine.test(t) && !attachmentProbe.test(t)).map(t => `console error: ${t}`)
  ];
}

/** Plugin ids registered in the app with a prefix, each with whether it has been activated. */
export async function pluginStates(page: Page, prefix: string): Promise<Record<string, boolean>> {
  return page.evaluate(p => {
    const app = (window as unknown as {
      jupyterapp?: { listPlugins(): string[]; isPluginActivated(id: string): boolean };
    }).jupyterapp;
    if (!app) throw new Error('window.jupyterapp is missing (exposeAppInBrowser is off?)');
    const out: Record<string, boolean> = {};
    for (const id of app.listPlugins().filter(i => i.startsWith(p))) out[id] = app.isPluginActivated(id);
    return out;
  }, prefix);
}

/** Wait until the app has restored its layout (the host sets data-stepwell-host="restored"). */
export async function waitForApp(page: Page, timeoutMs = 60_000): Promise<void> {
  await page.waitForFunction(() => document.body.dataset.stepwellHost === 'restored', undefined, { timeout: timeoutMs });
}

/** Go to a URL and wait until a notebook with at least one cell is visible. Returns the seconds it took. */
export async function openNotebook(page: Page, url: string, timeoutMs = 60_000): Promise<number> {
  const t0 = Date.now();
  await page.goto(url, { waitUntil: 'domcontentloaded', timeout: timeoutMs });
  await page.locator('.jp-NotebookPanel:not(.lm-mod-hidden) .jp-Notebook .jp-Cell').first().waitFor({ state: 'visible', timeout: timeoutMs });
  const seconds = (Date.now() - t0) / 1000;
  await waitForApp(page, timeoutMs);
  await page.evaluate(async () => {
    const app = (window as unknown as { jupyterapp?: { shell: { currentWidget: unknown } } }).jupyterapp;
    const widget = app?.shell.currentWidget as { context?: { ready: Promise<void> } } | null | undefined;
    await widget?.context?.ready;
  });
  return seconds;
}

/**
 * Start-up milestones in seconds since navigation: DOM ready, the entry script, all plugin
 * modules loaded, app started, layout restored (performance marks set by src/host).
 */
export async function startupTimings(page: Page): Promise<Record<string, number>> {
  return page.evaluate(() => {
    const out: Record<string, number> = {};
    const nav = performance.getEntriesByType('navigation')[0] as PerformanceNavigationTiming | undefined;
    if (nav) out.domContentLoaded = nav.domContentLoadedEventEnd / 1000;
    for (const m of performance.getEntriesByType('mark')) {
      if (m.name.startsWith('stepwell-host:')) out[m.name.slice('stepwell-host:'.length)] = m.startTime / 1000;
    }
    return out;
  });
}

/** Number of cells in the current notebook's model (not only the rendered ones). */
export async function notebookCellCount(page: Page): Promise<number> {
  return page.evaluate(async () => {
    const app = (window as unknown as { jupyterapp?: { shell: { currentWidget: unknown } } }).jupyterapp;
    const widget = app?.shell.currentWidget as
      | { context?: { ready: Promise<void> }; model?: { cells: { length: number } } }
      | null
      | undefined;
    if (!widget?.context || !widget.model) throw new Error('the current widget is not a notebook');
    await widget.context.ready;
    return widget.model.cells.length;
  });
}

/** Whether a modal dialog (for example "Select Kernel") is showing. */
export async function dialogTitle(page: Page): Promise<string | null> {
  const dialog = page.locator('.jp-Dialog');
  if ((await dialog.count()) === 0 || !(await dialog.first().isVisible())) return null;
  return (await dialog.first().locator('.jp-Dialog-header').textContent())?.trim() ?? '';
}

/** Execute a JupyterLab command by id through the app object the page config exposes. */
export async function executeCommand(page: Page, id: string, args: Record<string, unknown> = {}): Promise<unknown> {
  return page.evaluate(
    async ([cmd, a]) => {
      const app = (window as unknown as { jupyterapp?: { commands: { execute(id: string, args: unknown): Promise<unknown>; hasCommand(id: string): boolean } } }).jupyterapp;
      if (!app) throw new Error('window.jupyterapp is missing (exposeAppInBrowser is off?)');
      if (!app.commands.hasCommand(cmd as string)) throw new Error(`no command ${cmd}`);
      const r = await app.commands.execute(cmd as string, a);
      return r === undefined || r === null || typeof r !== 'object' ? r : String(r);
    },
    [id, args] as const
  );
}

/** Run a command the way a user does: open the command palette, type its label, press Enter. */
export async function runPaletteCommand(page: Page, label: string): Promise<void> {
  await page.keyboard.press('Control+Shift+C');
  const input = page.locator('.lm-CommandPalette-input');
  await input.waitFor({ state: 'visible', timeout: 10_000 });
  await input.fill(label);
  const item = page.locator('.lm-CommandPalette-item', { hasText: label }).first();
  await item.waitFor({ state: 'visible', timeout: 10_000 });
  await input.press('Enter');
}

/** Save a full-page screenshot to test-output/<name>.png and return its path. */
/**
 * Appends a code cell with `source` to the notebook in view (not saved) and runs it, as
 * Shift+Enter would: a stepwell cell starts its session.
 */
export async function appendAndRunCell(page: Page, source: string): Promise<void> {
  await page.evaluate(async text => {
    type Panel = { content: { model: { sharedModel: { insertCell(i: number, c: unknown): void }; cells: { length: number } }; activeCellIndex: number } };
    const lab = (window as unknown as { jupyterapp: { shell: { currentWidget: Panel }; commands: { execute(id: string): Promise<unknown> } } }).jupyterapp;
    const nb = lab.shell.currentWidget.content;
    const at = nb.model.cells.length;
    nb.model.sharedModel.insertCell(at, { cell_type: 'code', source: text, metadata: {} });
    nb.activeCellIndex = at;
    await lab.commands.execute('notebook:run-cell');
  }, source);
}

export async function screenshot(page: Page, name: string): Promise<string> {
  fs.mkdirSync(OUTPUT_DIR, { recursive: true });
  const file = path.join(OUTPUT_DIR, `${name}.png`);
  await page.screenshot({ path: file });
  return file;
}

/** Runs the real command line `stepwell ARGS…` (a child process, as CI would): exit status and output. */
export function stepwell(...args: string[]): { code: number; out: string; err: string } {
  const r = spawnSync(process.execPath, [path.join(ROOT, 'src', 'cli', 'bin.cjs'), ...args], { cwd: ROOT, encoding: 'utf8', timeout: 120_000 });
  return { code: r.status ?? -1, out: r.stdout, err: r.stderr };
}
