/**
 * Stepwell installed from its wheel into a real JupyterLab server (from PyPI, in .venv), as a
 * practitioner has it: open a demo notebook from disk, step a stepwell cell, save and read the
 * .ipynb on disk; run an ordinary Python cell in the same notebook; take arrays from the kernel
 * into a new stepwell cell and step it; restart the server and reopen. Then run a demo through
 * `jupyter nbconvert --execute` with a Python kernel and open what it wrote.
 * Screenshots go to test-output/.
 */
import * as fs from 'fs';
import * as path from 'path';
import type { Locator, Page } from 'playwright-core';
import { spawnSync } from 'child_process';
import { dialogTitle, executeCommand, launchBrowser, ourErrors, ROOT, screenshot, type IBrowserSession } from './harness';
import {
  DEMO_DIR,
  kernelValue,
  readNotebook,
  requireWheelInstalled,
  runInVenv,
  sourceOf,
  startJupyterServer,
  waitForKernelIdle,
  workFolder,
  type IJupyterServer
} from './lab-harness';

jest.setTimeout(600_000);

const DEMO = 'greenhouse-humidity-sensor.ipynb';
const folder = workFolder('lab-server');
let server: IJupyterServer;
let browser: IBrowserSession;

beforeAll(async () => {
  requireWheelInstalled();
  server = await startJupyterServer({ root: folder.work, state: folder.state });
  browser = await launchBrowser();
});

afterAll(async () => {
  await browser?.close();
  await server?.stop();
});

const cellsOf = (page: Page): Locator => page.locator('.jp-NotebookPanel:not(.lm-mod-hidden) .jp-Notebook .jp-Cell');
const status = (cell: Locator): Promise<string> => cell.locator('.sw-Status').innerText();
async function waitForStep(cell: Locator, step: number, timeout = 60_000): Promise<void> {
  await cell.locator('.sw-Status', { hasText: new RegExp(`^step ${step} ·`) }).waitFor({ timeout });
}

/** Open a notebook of the server and wait until the app has restored and the document is loaded. */
async function open(page: Page, url: string): Promise<void> {
  await page.goto(url, { waitUntil: 'domcontentloaded', timeout: 90_000 });
  await cellsOf(page).first().waitFor({ state: 'visible', timeout: 90_000 });
  await page.evaluate(async () => {
    const app = (window as unknown as { jupyterapp?: { restored: Promise<void>; shell: { currentWidget: unknown } } }).jupyterapp;
    if (!app) throw new Error('window.jupyterapp is missing (expose_app_in_browser is off?)');
    await app.restored;
    await (app.shell.currentWidget as { context?: { ready: Promise<void> } } | null)?.context?.ready;
  });
}

/** Save the current notebook and wait for the tab to be clean. */
async function save(page: Page): Promise<void> {
  await executeCommand(page, 'docmanager:save');
  await page.waitForFunction(() => !document.querySelector('.jp-mod-dirty'), undefined, { timeout: 20_000 });
}

describe('Stepwell in a real JupyterLab with a Python kernel', () => {
  const file = path.join(folder.work, DEMO);
  const original = readNotebook(path.join(folder.work, DEMO));

  it('lists the installed extension as enabled and prebuilt, with the default cell executor disabled', () => {
    const r = runInVenv('jupyter', ['labextension', 'list'], folder.base);
    const text = `${r.stdout}${r.stderr}`;
    expect(r.status).toBe(0);
    expect(text).toMatch(/stepwell v\d+\.\d+\.\d+ .*enabled.*OK.*\(python, stepwell\)/);
    expect(text).toMatch(/Disabled extensions:\s+@jupyterlab\/notebook-extension:cell-executor/);
  });

  it('opens a demo from disk, steps a cell, and saves a ledger without touching anything else', async () => {
    const page = browser.page;
    await open(page, server.url(DEMO));
    // The demo declares the Python kernel: it starts, and no "Select Kernel" dialog blocks the page.
    await waitForKernelIdle(page);
    expect(await dialogTitle(page)).toBeNull();
    const cells = cellsOf(page);
    const diverging = cells.nth(2);
    await waitForStep(diverging, 14);
    // The spec is highlighted as YAML, not as the kernel's Python, and the magic line is greyed.
    const mimes = await page.evaluate(() => {
      const app = (window as unknown as { jupyterapp: { shell: { currentWidget: { content: { widgets: { model: { type: string; mimeType: string } }[] } } } } }).jupyterapp;
      return app.shell.currentWidget.content.widgets.map(w => `${w.model.type}:${w.model.mimeType}`);
    });
    expect(mimes).toEqual(['markdown:text/x-ipythongfm', 'code:text/x-ipython', 'code:text/x-yaml', 'markdown:text/x-ipythongfm', 'markdown:text/x-ipythongfm']);
    expect(await diverging.locator('.cm-line.sw-mod-magicLine').innerText()).toBe('%%stepwell');

    // The fix branch: show it (no kernel involved), then step once.
    const fix = diverging.locator('.sw-Branch').nth(1);
    const fixName = (await fix.getAttribute('data-branch')) as string;
    await fix.click();
    await diverging.locator('.sw-Status', { hasText: `branch ${fixName}` }).waitFor({ timeout: 60_000 });
    await diverging.locator('.sw-Button-step').click();
    await waitForStep(diverging, 61);
    await diverging.locator('.sw-CellWidget').scrollIntoViewIfNeeded();
    await screenshot(page, 'lab-1-stepped');
    await save(page);

    const saved = readNotebook(file);
    expect(saved.cells.length).toBe(original.cells.length);
    const ledger = saved.cells[2].metadata.stepwell as { activeBranch: string; branches: { name: string; head: { step: number } }[] };
    expect(ledger.activeBranch).toBe(fixName);
    expect(ledger.branches.map(b => b.head.step)).toEqual([14, 61]);
    expect(sourceOf(saved.cells[2])).toBe(sourceOf(original.cells[2]));
    // Every other cell is exactly as it was on disk, and so is the notebook's own metadata
    // (JupyterLab only completes language_info from the running kernel, as it does for any notebook).
    for (const i of [0, 1, 3, 4]) expect(saved.cells[i]).toEqual(original.cells[i]);
    const { language_info: savedLanguage, ...savedMeta } = saved.metadata;
    const { language_info: originalLanguage, ...originalMeta } = original.metadata;
    expect(savedMeta).toEqual(originalMeta);
    expect((savedLanguage as { name: string }).name).toBe((originalLanguage as { name: string }).name);
    expect(ourErrors(browser)).toEqual([]);
  });

  it('runs an ordinary Python cell of the same notebook in the kernel', async () => {
    const page = browser.page;
    const cells = cellsOf(page);
    await cells.last().click();
    await page.keyboard.press('Escape');
    await executeCommand(page, 'notebook:insert-cell-below');
    await executeCommand(page, 'notebook:change-cell-to-code');
    await executeCommand(page, 'notebook:enter-edit-mode');
    await page.keyboard.type(
      [
        'import numpy as np',
        'rng = np.random.default_rng(3)',
        'X_probe = rng.normal(size=(40, 3))',
        'y_probe = np.tanh(X_probe @ np.array([0.5, -0.2, 0.1]))',
        'ragged = [[1.0, 2.0], [3.0]]',
        'words = np.array(["dry", "wet"])',
        'with_nan = np.array([1.0, np.nan, 2.0])',
        'big = np.zeros(50_001)',
        'print("shapes", X_probe.shape, y_probe.shape)'
      ].join('\n')
    );
    await executeCommand(page, 'notebook:run-cell');
    const output = cells.last().locator('.jp-OutputArea-output', { hasText: 'shapes (40, 3) (40,)' });
    await output.waitFor({ timeout: 60_000 });
    await screenshot(page, 'lab-2-python-cell');
  });

  it('takes arrays from the kernel into a new stepwell cell, with exact errors first, and steps it', async () => {
    const page = browser.page;
    const dialog = page.locator('.jp-Dialog');
    const take = async (x: string, y: string): Promise<void> => {
      void executeCommand(page, 'stepwell:take-data').catch(() => undefined);
      await dialog.locator('input[data-role="x"]').waitFor({ timeout: 10_000 });
      await dialog.locator('input[data-role="x"]').fill(x);
      await dialog.locator('input[data-role="y"]').fill(y);
      await dialog.locator('button', { hasText: 'Read Arrays' }).click();
    };
    const problems = async (): Promise<string[]> => {
      await dialog.locator('.sw-TakeProblems').waitFor({ timeout: 30_000 });
      const lines = await dialog.locator('.sw-TakeProblems-line').allInnerTexts();
      return lines;
    };
    const close = async (): Promise<void> => {
      await dialog.locator('button', { hasText: 'Ok' }).click();
      await dialog.waitFor({ state: 'detached', timeout: 10_000 });
    };

    await take('missing_name', 'ragged');
    const first = await problems();
    await screenshot(page, 'lab-3-take-errors');
    expect(first).toEqual([
      'x ← missing_name: no variable named missing_name in the kernel (run the cell that defines it first)',
      expect.stringMatching(/^y ← ragged: ragged: its rows do not all have the same length/)
    ]);
    await close();
    await take('words', 'with_nan');
    expect(await problems()).toEqual([
      'x ← words: holds <U3 values, not numbers — convert it to a float array',
      'y ← with_nan: 1 of its values are NaN or ±∞ (the first at flat index 1); drop or fill them first'
    ]);
    await close();
    await take('big', 'y_probe');
    expect(await problems()).toEqual([
      expect.stringMatching(/^x ← big: 50001 numbers, above the limit of 20000 \(setting "Largest array taken from the kernel"\)/)
    ]);
    await close();

    await take('X_probe', 'y_probe');
    const shapes = dialog.locator('.sw-TakeShapes');
    await shapes.waitFor({ timeout: 30_000 });
    expect(await dialog.locator('.sw-TakeShapes-line').allInnerTexts()).toEqual([
      'x ← X_probe (40 × 3, float64)',
      'y ← y_probe (40, float64)',
      "160 numbers: inline in the new cell's spec with their SHA-256, or saved as .npy files next to the notebook (better for large arrays; the spec names the files)."
    ]);
    await screenshot(page, 'lab-4-take-shapes');
    await dialog.locator('button', { hasText: 'Insert Inline' }).click();
    await dialog.waitFor({ state: 'detached', timeout: 10_000 });

    const cells = cellsOf(page);
    const taken = cells.last();
    await waitForStep(taken, 0);
    await taken.locator('.sw-Button-step').click();
    await waitForStep(taken, 1);
    await taken.locator('.sw-CellWidget').scrollIntoViewIfNeeded();
    await screenshot(page, 'lab-5-taken-stepped');

    // The recorded hash is the one NumPy computes in the kernel over the same arrays.
    const text = await page.evaluate(() => {
      const app = (window as unknown as { jupyterapp: { shell: { currentWidget: { content: { activeCell: { model: { sharedModel: { getSource(): string } } } } } } } }).jupyterapp;
      return app.shell.currentWidget.content.activeCell.model.sharedModel.getSource();
    });
    const recorded = /sha256: ([0-9a-f]{64})/.exec(text)?.[1];
    // source: NumPy 2.4.6 and Python's hashlib in the kernel, over the arrays as the kernel holds them.
    const numpyHash = await kernelValue(page, 'import hashlib', 'hashlib.sha256(b"".join(np.asarray(a, "<f8").tobytes() for a in (X_probe, y_probe))).hexdigest()');
    expect(recorded).toBeDefined();
    expect(numpyHash).toBe(`'${recorded}'`);
    expect(text).toContain('kernel: { "x": "X_probe", "y": "y_probe" }');
    await save(page);
    expect(ourErrors(browser)).toEqual([]);
  });

  it('takes the same arrays as .npy files next to the notebook, and the new cell reads them', async () => {
    const page = browser.page;
    const dialog = page.locator('.jp-Dialog');
    // A file of that name is already there: the arrays must not overwrite it.
    fs.writeFileSync(path.join(folder.work, 'X_probe.npy'), 'not mine to overwrite');
    void executeCommand(page, 'stepwell:take-data').catch(() => undefined);
    await dialog.locator('input[data-role="x"]').waitFor({ timeout: 10_000 });
    await dialog.locator('input[data-role="x"]').fill('X_probe');
    await dialog.locator('input[data-role="y"]').fill('y_probe');
    await dialog.locator('button', { hasText: 'Read Arrays' }).click();
    await dialog.locator('.sw-TakeShapes').waitFor({ timeout: 30_000 });
    await dialog.locator('button', { hasText: 'Save as .npy Files' }).click();
    await dialog.waitFor({ state: 'detached', timeout: 10_000 });
    const taken = cellsOf(page).last();
    await waitForStep(taken, 0);
    await taken.locator('.sw-Button-step').click();
    await waitForStep(taken, 1);
    await taken.locator('.sw-CellWidget').scrollIntoViewIfNeeded();
    await screenshot(page, 'lab-5b-taken-as-npy');
    expect(fs.readFileSync(path.join(folder.work, 'X_probe.npy'), 'utf8')).toBe('not mine to overwrite');
    const text = await page.evaluate(() => {
      const app = (window as unknown as { jupyterapp: { shell: { currentWidget: { content: { activeCell: { model: { sharedModel: { getSource(): string } } } } } } } }).jupyterapp;
      return app.shell.currentWidget.content.activeCell.model.sharedModel.getSource();
    });
    expect(text).toContain('  file: "X_probe-2.npy"\n  targetFile: "y_probe.npy"');
    // source: NumPy 2.4.6 in the kernel reads the saved files back equal to the arrays it holds.
    expect(await kernelValue(page, 'import numpy as np', 'bool(np.array_equal(np.load("X_probe-2.npy"), X_probe) and np.array_equal(np.load("y_probe.npy"), y_probe))')).toBe('True');
    await save(page);
    const ledger = readNotebook(file).cells.map((c) => c.metadata.stepwell as { dataHash?: string } | undefined).filter((l) => l !== undefined).pop();
    expect(ledger?.dataHash).toMatch(/^[0-9a-f]{64}$/);
    expect(ourErrors(browser)).toEqual([]);
  });

  it('opens a notebook whose data and starting weights are files beside it, steps it, and stepwell verify accepts what was saved', async () => {
    const page = browser.page;
    fs.cpSync(path.join(DEMO_DIR, 'walk-in-cooler'), path.join(folder.work, 'walk-in-cooler'), { recursive: true });
    await open(page, server.url('walk-in-cooler/walk-in-cooler.ipynb'));
    const cell = cellsOf(page).filter({ has: page.locator('.sw-CellWidget') }).first();
    await waitForStep(cell, 18);
    await cell.locator('.sw-Branch[data-branch="lr=0.1"]').click();
    await waitForStep(cell, 81);
    await cell.locator('.sw-Button-step').click();
    await waitForStep(cell, 82);
    expect(await cell.locator('.sw-Problem').count()).toBe(0);
    await cell.locator('.sw-CellWidget').scrollIntoViewIfNeeded();
    await screenshot(page, 'lab-5c-files-beside-notebook');
    await save(page);
    // source: Node's V8 replaying what Chromium's V8 computed from the files the real server sent
    const r = spawnSync(process.execPath, [path.join(ROOT, 'src', 'cli', 'bin.cjs'), 'verify', path.join(folder.work, 'walk-in-cooler', 'walk-in-cooler.ipynb')], { cwd: ROOT, encoding: 'utf8', timeout: 120_000 });
    expect(r.stdout).toMatch(/lr=0\.1\s+bit-identical \(from main at step 1, 82 steps/);
    expect(r.status).toBe(0);
    expect(ourErrors(browser)).toEqual([]);
  });

  it('reopens everything from disk after a server restart', async () => {
    await server.stop();
    server = await startJupyterServer({ root: folder.work, state: folder.state });
    const page = browser.page;
    await open(page, server.url(DEMO));
    const cells = cellsOf(page);
    await waitForStep(cells.nth(2), 61);
    const taken = cells.last();
    await taken.scrollIntoViewIfNeeded();
    await waitForStep(taken, 1);
    await taken.locator('.sw-Button-verify').click();
    await taken.locator('.sw-Notice', { hasText: 'Replayed 1 steps from the seed: bit-identical' }).waitFor({ timeout: 60_000 });
    await screenshot(page, 'lab-6-restarted');
    const saved = readNotebook(file);
    expect(saved.cells.filter(c => c.metadata.stepwell !== undefined).length).toBe(3);
    expect(ourErrors(browser)).toEqual([]);
  });
});

describe('a demo through jupyter nbconvert --execute with a Python kernel', () => {
  it('runs every cell (the magic prints a notice), keeps the ledgers, and the saved outputs render', async () => {
    const name = 'parcel-sorter-plateau.ipynb';
    const r = runInVenv('jupyter', ['nbconvert', '--execute', '--to', 'notebook', '--output', 'executed-parcels.ipynb', name], folder.work);
    expect(`${r.stderr}`).toMatch(/Writing \d+ bytes to executed-parcels\.ipynb/);
    expect(r.status).toBe(0);
    const before = readNotebook(path.join(folder.work, name));
    const after = readNotebook(path.join(folder.work, 'executed-parcels.ipynb'));
    expect(after.cells.length).toBe(before.cells.length);
    const stepwellCells = after.cells.map((c, i) => ({ c, i })).filter(({ c }) => sourceOf(c).startsWith('%%stepwell'));
    expect(stepwellCells.map(({ i }) => i)).toEqual([2]);
    for (const { c, i } of stepwellCells) {
      // The ledger is untouched; the one output is the magic's notice with Stepwell's own type.
      expect(c.metadata.stepwell).toEqual(before.cells[i].metadata.stepwell);
      expect(c.outputs).toEqual([
        expect.objectContaining({
          output_type: 'display_data',
          data: {
            'text/plain': expect.stringMatching(/^Stepwell experiment \(\d+ spec lines\): stepped in the browser, not by this kernel\./),
            'application/vnd.stepwell.cell+json': { version: 1, summary: null }
          }
        })
      ]);
    }
    const page = browser.page;
    await open(page, server.url('executed-parcels.ipynb'));
    const cells = cellsOf(page);
    await waitForStep(cells.nth(2), 100);
    expect(await status(cells.nth(2))).toMatch(/^step 100 · loss/);
    await cells.nth(2).locator('.sw-CellWidget').scrollIntoViewIfNeeded();
    await screenshot(page, 'lab-7-nbconvert-executed');
    expect(fs.existsSync(path.join(folder.work, 'executed-parcels.ipynb'))).toBe(true);
    expect(ourErrors(browser)).toEqual([]);
  });
});
