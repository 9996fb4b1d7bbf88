/**
 * The embedded app as a user meets it: `serve` prints a URL, the URL opens the first demo
 * notebook, no blocking "Select Kernel" dialog appears, and nothing from our code throws.
 */
import * as fs from 'fs';
import * as http from 'http';
import { spawnSync } from 'child_process';
import * as path from 'path';
import {
  dialogTitle,
  ensureBuilt,
  executeCommand,
  launchBrowser,
  notebookCellCount,
  OUTPUT_DIR,
  ROOT,
  openNotebook,
  ourErrors,
  pluginStates,
  runPaletteCommand,
  screenshot,
  startApp,
  startupTimings,
  type IAppServer,
  type IBrowserSession
} from './harness';

jest.setTimeout(180_000);

let app: IAppServer;
let browser: IBrowserSession;

beforeAll(async () => {
  ensureBuilt();
  app = await startApp();
  browser = await launchBrowser();
});

afterAll(async () => {
  await browser?.close();
  await app?.stop();
});

describe('embedded app', () => {
  it('prints a loopback URL that opens a notebook', () => {
    expect(app.url).toMatch(/^http:\/\/127\.0\.0\.1:\d+\/lab\/tree\/.+\.ipynb$/);
  });

  it('opens the first demo notebook without a kernel dialog and without errors from our code', async () => {
    const seconds = await openNotebook(browser.page, app.url);
    const marks = Object.entries(await startupTimings(browser.page)).map(([k, v]) => `${k} ${v.toFixed(2)} s`);
    console.log(`notebook visible after ${seconds.toFixed(1)} s (${marks.join(', ')})`);
    const notebookName = decodeURIComponent(app.url.split('/lab/tree/')[1]);
    const tabLabel = await browser.page.locator('#jp-main-dock-panel .lm-TabBar-tab.lm-mod-current .lm-TabBar-tabLabel').textContent();
    expect(tabLabel).toBe(notebookName.split('/').pop());
    // The kernel dialog, if any, appears shortly after the notebook; give it time to show up.
    await browser.page.waitForTimeout(2000);
    expect(await dialogTitle(browser.page)).toBeNull();
    const file = await screenshot(browser.page, 'app-notebook-open');
    expect(fs.statSync(file).size).toBeGreaterThan(10_000);
    expect(ourErrors(browser)).toEqual([]);
  });

  it('activates the host plugins and every Stepwell plugin, with Stepwell running the cells', async () => {
    expect(await pluginStates(browser.page, '@stepwell/host:')).toEqual({ '@stepwell/host:session-dialogs': true });
    // The app is Stepwell's: a build without its plugins must fail here, not pass quietly.
    expect(await pluginStates(browser.page, 'stepwell:')).toEqual({ 'stepwell:about': true, 'stepwell:cells': true, 'stepwell:executor': true, 'stepwell:kernel': true, 'stepwell:open-check': true, 'stepwell:plugin': true, 'stepwell:renderer': true });
    // The host falls back to JupyterLab's executor (with this warning) only if nobody provides one.
    expect(browser.consoleWarnings.filter(w => /no plugin provides/.test(w))).toEqual([]);
    // "About Stepwell" sits in the Help menu (declared in schema/plugin.json) and opens Stepwell's own dialog.
    await browser.page.locator('.lm-MenuBar-itemLabel', { hasText: /^Help$/ }).click();
    await browser.page.locator('.lm-Menu-itemLabel', { hasText: /^About Stepwell$/ }).click();
    await browser.page.locator('.jp-Dialog-header', { hasText: 'About Stepwell' }).waitFor({ timeout: 10_000 });
    await browser.page.locator('.jp-Dialog .jp-mod-accept').click();
    await browser.page.locator('.jp-Dialog').waitFor({ state: 'detached', timeout: 10_000 });
  });

  it('runs commands from the palette and by id', async () => {
    const start = await notebookCellCount(browser.page);
    await executeCommand(browser.page, 'notebook:insert-cell-below');
    expect(await notebookCellCount(browser.page)).toBe(start + 1);
    await runPaletteCommand(browser.page, 'Insert Cell Below');
    // The palette runs the command after the key event is processed: poll for its effect.
    let count = start + 1;
    for (let i = 0; i < 50 && count !== start + 2; i++) {
      await browser.page.waitForTimeout(100);
      count = await notebookCellCount(browser.page);
    }
    expect(count).toBe(start + 2);
    expect(await dialogTitle(browser.page)).toBeNull();
  });

  it('runs a plain code cell without a kernel: a short notice, no blocking dialog', async () => {
    const page = browser.page;
    await executeCommand(page, 'notebook:insert-cell-below');
    await executeCommand(page, 'notebook:change-cell-to-code');
    await executeCommand(page, 'notebook:enter-edit-mode');
    await page.keyboard.type('1 + 1');
    await executeCommand(page, 'notebook:run-cell');
    await page.waitForTimeout(1000);
    expect(await dialogTitle(page)).toBeNull();
    const toasts = await page.locator('.Toastify__toast').allInnerTexts();
    expect(toasts.some(t => /No Jupyter kernel is available/.test(t))).toBe(true);
    await screenshot(page, 'app-no-kernel-notice');
  });

  it('switches to the dark theme and back (theme style sheets are served)', async () => {
    const page = browser.page;
    const themeOf = () => page.evaluate(() => document.body.dataset.jpThemeName ?? '');
    await executeCommand(page, 'apputils:change-theme', { theme: 'JupyterLab Dark' });
    await page.waitForFunction(() => document.body.dataset.jpThemeName === 'JupyterLab Dark', undefined, { timeout: 15_000 });
    // The dark theme's variables really apply: the layout background is dark.
    const background = await page.evaluate(() => getComputedStyle(document.body).getPropertyValue('--jp-layout-color0').trim());
    expect(background.toLowerCase()).not.toBe('white');
    await screenshot(page, 'app-dark-theme');
    await executeCommand(page, 'apputils:change-theme', { theme: 'JupyterLab Light' });
    await page.waitForFunction(() => document.body.dataset.jpThemeName === 'JupyterLab Light', undefined, { timeout: 15_000 });
    expect(await themeOf()).toBe('JupyterLab Light');
    expect(browser.failedRequests.filter(r => r.includes('/themes/'))).toEqual([]);
  });

  it('keeps a saved notebook in browser storage across a reload', async () => {
    const page = browser.page;
    const count = await notebookCellCount(page);
    await executeCommand(page, 'docmanager:save');
    await page.waitForFunction(
      () => !document.querySelector('#jp-main-dock-panel .lm-TabBar-tab.lm-mod-current.jp-mod-dirty'),
      undefined,
      { timeout: 10_000 }
    );
    await openNotebook(page, app.url);
    expect(await notebookCellCount(page)).toBe(count);
    expect(ourErrors(browser)).toEqual([]);
  });
});

describe('app server', () => {
  it('moves to a free port when the requested one is taken, and says so', async () => {
    const second = await startApp({ args: [], env: { STEPWELL_PORT: String(app.port) } });
    try {
      expect(second.port).not.toBe(app.port);
      expect(second.output()).toMatch(new RegExp(`port ${app.port} is in use`));
      const res = await fetch(second.url);
      expect(res.status).toBe(200);
      expect(await res.text()).toContain('jupyter-config-data');
    } finally {
      await second.stop();
    }
  });

  it('does not expose the app object on users\' pages (only a server started for tests does)', async () => {
    const plain = await startApp({ env: { STEPWELL_EXPOSE_APP: '0' } });
    try {
      const page = await (await fetch(`${plain.origin}/lab`)).text();
      expect(page).toMatch(/"exposeAppInBrowser": "false"/);
      const tested = await (await fetch(`${app.origin}/lab`)).text();
      expect(tested).toMatch(/"exposeAppInBrowser": "true"/);
    } finally {
      await plain.stop();
    }
  });

  it('rejects a bad port with a message naming the setting', async () => {
    await expect(startApp({ args: ['--port', 'eighty'] })).rejects.toThrow(/port must be an integer from 0 to 65535 \(from --port\), got "eighty"/);
  });

  it('serves the contents index and nothing outside build/', async () => {
    const index = (await (await fetch(`${app.origin}/api/contents/all.json`)).json()) as { content: { path: string; type: string }[] };
    const notebook = decodeURIComponent(app.url.split('/lab/tree/')[1]);
    expect(index.content.filter(c => c.type === 'notebook').map(c => c.path)).toContain(notebook);
    const file = await fetch(`${app.origin}/files/${notebook.split('/').map(encodeURIComponent).join('/')}`);
    expect(file.status).toBe(200);
    expect(((await file.json()) as { nbformat: number }).nbformat).toBe(4);
    // Path traversal: a raw request for a file above build/ must not be answered with it.
    const status = await new Promise<number>((resolve, reject) => {
      const req = http.get({ host: '127.0.0.1', port: app.port, path: '/../package.json' }, res => {
        res.resume();
        resolve(res.statusCode ?? 0);
      });
      req.on('error', reject);
    });
    expect(status).toBe(404);
  });

  it('`npm start` (start.mjs) reuses the build and prints the notebook URL', async () => {
    const started = await startApp({ script: 'start.mjs', args: [], env: { STEPWELL_PORT: '0' } });
    try {
      expect(started.output()).toMatch(/bundle up to date|built in/);
      expect(started.url).toMatch(/\/lab\/tree\/.+\.ipynb$/);
      expect((await fetch(started.url)).status).toBe(200);
    } finally {
      await started.stop();
    }
  });
});

describe('prebuilt (federated) extensions', () => {
  it('loads one named by STEPWELL_LABEXTENSIONS and activates it with the app\'s shared singletons', async () => {
    const out = path.join(OUTPUT_DIR, 'federated-check');
    const built = spawnSync(process.execPath, [path.join(ROOT, 'src', 'host', 'federated-check', 'build.mjs'), out], { encoding: 'utf8' });
    expect(built.stderr).toBe('');
    expect(built.status).toBe(0);
    const server = await startApp({ env: { STEPWELL_LABEXTENSIONS: out } });
    const session = await launchBrowser();
    try {
      expect(server.output()).toContain('serving prebuilt extensions stepwell-host-federated-check');
      await openNotebook(session.page, server.url);
      // The plugin requires the command palette token: it activates only if the token object is
      // the app's own, i.e. @jupyterlab/apputils came from the shared scope.
      expect(await session.page.evaluate(() => document.body.dataset.stepwellFederatedCheck)).toBe('activated');
      expect(await pluginStates(session.page, 'stepwell-host-federated-check:')).toEqual({
        'stepwell-host-federated-check:plugin': true
      });
      // Its package.json asks for a core plugin to be switched off: the served page config did.
      expect(await pluginStates(session.page, '@jupyterlab/help-extension:jupyter-forum')).toEqual({});
      expect(await pluginStates(browser.page, '@jupyterlab/help-extension:jupyter-forum')).toEqual({
        '@jupyterlab/help-extension:jupyter-forum': true
      });
      expect(ourErrors(session)).toEqual([]);
    } finally {
      await session.close();
      await server.stop();
    }
  });

  it("loads Stepwell's own prebuilt extension in place of the bundled plugins, and a cell steps in its worker", async () => {
    // `npm run test:e2e` builds it (src/package/wheel.mjs); a lone jest run may not have.
    const out = path.join(ROOT, 'stepwell', 'labextension');
    expect(fs.existsSync(path.join(out, 'package.json'))).toBe(true);
    const server = await startApp({ env: { STEPWELL_LABEXTENSIONS: out } });
    const session = await launchBrowser();
    try {
      expect(server.output()).toContain('serving prebuilt extensions stepwell');
      await openNotebook(session.page, server.url);
      // The plugins came from the remote entry: the container registered itself, and all activated.
      expect(await session.page.evaluate(() => typeof (window as unknown as { _JUPYTERLAB?: Record<string, unknown> })._JUPYTERLAB?.stepwell)).toBe('object');
      const states = await pluginStates(session.page, 'stepwell:');
      expect(Object.keys(states).length).toBeGreaterThan(0);
      expect(Object.values(states).every(Boolean)).toBe(true);
      const cell = session.page.locator('.sw-CellWidget').first();
      await cell.waitFor({ timeout: 30_000 });
      await cell.locator('.sw-Button-rewind').click();
      await cell.locator('.sw-Form input').fill('3');
      await cell.locator('.sw-Form button', { hasText: 'Go' }).click();
      await cell.locator('.sw-Status', { hasText: /^step 3 \(of 14\) ·/ }).waitFor({ timeout: 30_000 });
      await cell.locator('.sw-Button-step').click();
      await cell.locator('.sw-Status', { hasText: /^step 4 \(of 14\) ·/ }).waitFor({ timeout: 30_000 });
      await screenshot(session.page, 'app-own-prebuilt');
      expect(ourErrors(session)).toEqual([]);
    } finally {
      await session.close();
      await server.stop();
    }
  });

  it('refuses a folder that is not a prebuilt extension, naming it', async () => {
    await expect(startApp({ env: { STEPWELL_LABEXTENSIONS: path.join(ROOT, 'src') } })).rejects.toThrow(
      /STEPWELL_LABEXTENSIONS: .*src has no package.json/
    );
  });
});
