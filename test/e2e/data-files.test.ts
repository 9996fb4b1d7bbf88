/**
 * Data and weights files in the embedded app, as a user meets them, in headless Chromium:
 *
 * 1. the walk-in cooler demo (CSV data and a safetensors start beside the notebook) opens from its
 *    ledger, its fix branch steps on — the files are read through JupyterLite's contents API — and
 *    the notebook saved in the browser verifies bit for bit with the real `stepwell verify`
 *    (a child process) next to copies of the same files;
 * 2. a CSV replaced in the browser's storage after saving is reported at `data.file` when the
 *    cell next steps, not replayed; Reset starts over from the new file;
 * 3. a cell naming a file that is not there shows the problem at the spec line that names it.
 *
 * Screenshots: test-output/files-*.png.
 */
import * as fs from 'fs';
import * as path from 'path';
import type { Locator, Page } from 'playwright-core';
import { ensureBuilt, launchBrowser, openNotebook, ourErrors, OUTPUT_DIR, ROOT, screenshot, startApp, type IAppServer, type IBrowserSession, stepwell } from './harness';

jest.setTimeout(300_000);

const FOLDER = 'walk-in-cooler';
const NOTEBOOK = `${FOLDER}/walk-in-cooler.ipynb`;
const FILES = ['cooler-week1.csv', 'cooler-week2.csv', 'cooler-start.safetensors'];
const OUT = path.join(OUTPUT_DIR, 'files');

let app: IAppServer;
let browser: IBrowserSession;

beforeAll(async () => {
  ensureBuilt();
  fs.mkdirSync(OUT, { recursive: true });
  app = await startApp();
  browser = await launchBrowser();
});

afterAll(async () => {
  await browser?.close();
  await app?.stop();
});


/** The app's contents manager, called in the page. */
async function contents<T>(page: Page, fn: string, args: unknown[]): Promise<T> {
  return page.evaluate(
    async ([f, a]) => {
      const c = (window as unknown as { jupyterapp: { serviceManager: { contents: Record<string, (...x: unknown[]) => Promise<unknown>> } } }).jupyterapp.serviceManager.contents;
      return c[f as string](...(a as unknown[]));
    },
    [fn, args] as const
  ) as Promise<T>;
}

const stepwellCell = (page: Page): Locator => page.locator('.jp-NotebookPanel:not(.lm-mod-hidden) .jp-Notebook .jp-Cell').filter({ has: page.locator('.sw-CellWidget') }).first();

describe('data and weights files in the embedded app', () => {
  it('steps the cooler demo from its files, saves, and stepwell verify says bit-identical', async () => {
    const page = browser.page;
    await openNotebook(page, `${app.origin}/lab/tree/${NOTEBOOK}`);
    const cell = stepwellCell(page);
    await cell.locator('.sw-Status', { hasText: /^step 18 · / }).waitFor({ timeout: 60_000 });
    await cell.locator('.sw-Branch[data-branch="lr=0.1"]').click();
    await cell.locator('.sw-Status', { hasText: /^step 81 · .*branch lr=0\.1/ }).waitFor({ timeout: 30_000 });
    await cell.locator('.sw-StepN').fill('9');
    await cell.locator('.sw-Button-stepN').click();
    await cell.locator('.sw-Status', { hasText: /^step 90 · / }).waitFor({ timeout: 60_000 });
    expect(await cell.locator('.sw-Problem').count()).toBe(0);
    await cell.locator('.sw-CellWidget').scrollIntoViewIfNeeded();
    await screenshot(page, 'files-1-cooler-stepped');

    await page.keyboard.press('Escape');
    await page.keyboard.press('Control+s');
    await page.locator('.jp-mod-dirty').waitFor({ state: 'detached', timeout: 20_000 }).catch(() => undefined);
    await page.waitForTimeout(1000);
    const saved = (await contents<{ content: { cells: { metadata: Record<string, unknown> }[] } }>(page, 'get', [NOTEBOOK, { content: true }])).content;
    const dir = fs.mkdtempSync(path.join(OUT, 'saved-'));
    for (const f of FILES) fs.copyFileSync(path.join(ROOT, 'demo-notebooks', FOLDER, f), path.join(dir, f));
    const file = path.join(dir, 'walk-in-cooler.ipynb');
    fs.writeFileSync(file, JSON.stringify(saved, null, 1));
    const ledger = saved.cells.map((c) => c.metadata.stepwell).find((l) => l !== undefined) as { dataHash: string; branches: { name: string; head: { step: number } }[] };
    expect(ledger.branches.map((b) => [b.name, b.head.step])).toEqual([['main', 18], ['lr=0.1', 90]]);
    expect(ledger.dataHash).toMatch(/^[0-9a-f]{64}$/);

    // source: Node's V8 replaying what Chromium's V8 computed (two engines; core's arithmetic is engine-independent)
    const v = stepwell('verify', file, '--json');
    expect(v.err).toBe('');
    expect(v.code).toBe(0);
    const r = JSON.parse(v.out) as { verdict: string; cells: { data: { changed: boolean; recordedHash: string }; branches: { name: string; match: string; steps: number }[] }[] };
    expect(r.verdict).toBe('bit-identical');
    expect(r.cells[0].data).toMatchObject({ changed: false, recordedHash: ledger.dataHash });
    expect(r.cells[0].branches.map((b) => [b.name, b.match, b.steps])).toEqual([['main', 'bit-identical', 18], ['lr=0.1', 'bit-identical', 90]]);
    fs.writeFileSync(path.join(OUT, 'verify.txt'), stepwell('verify', file).out);
    expect(ourErrors(browser)).toEqual([]);
  });

  it('reports a CSV replaced after saving at data.file instead of replaying, and Reset starts over from it', async () => {
    const page = browser.page;
    const csv = fs.readFileSync(path.join(ROOT, 'demo-notebooks', FOLDER, 'cooler-week1.csv'), 'utf8');
    const lines = csv.split('\n');
    lines[1] = lines[1].replace(/,([0-9.]+)$/, (_m, kw: string) => `,${(Number(kw) + 0.5).toFixed(2)}`);
    await contents(page, 'save', [`${FOLDER}/cooler-week1.csv`, { type: 'file', format: 'text', content: lines.join('\n') }]);
    // A fresh page: the cell's engine starts again and reads the files as they are now.
    await openNotebook(page, `${app.origin}/lab/tree/${NOTEBOOK}`);
    const cell = stepwellCell(page);
    await cell.locator('.sw-Status', { hasText: /^step 90 · / }).waitFor({ timeout: 60_000 });
    await cell.locator('.sw-Button-step').click();
    const problem = cell.locator('.sw-Problem', { hasText: 'cooler-week1.csv, cooler-week2.csv changed since this session was saved' });
    await problem.waitFor({ timeout: 30_000 });
    const source = (await cell.locator('.cm-content').innerText()).split('\n');
    const line = source.findIndex((l) => l.includes('file: cooler-week1.csv')) + 1;
    expect(line).toBeGreaterThan(0);
    expect(await problem.innerText()).toMatch(new RegExp(`^line ${line}:\\d+ \\(data\\.file\\): `));
    expect(await cell.locator('.sw-Status').innerText()).toMatch(/^step 90 · /);
    await cell.locator('.sw-Notice', { hasText: 'Reset to start over' }).waitFor({ timeout: 10_000 });
    await problem.scrollIntoViewIfNeeded();
    await screenshot(page, 'files-2-csv-changed');
    expect(await cell.locator('.sw-Button-reset').isDisabled()).toBe(false);
    await cell.locator('.sw-Button-reset').click();
    await cell.locator('.sw-Confirm .sw-Button-confirm').click();
    await cell.locator('.sw-Status', { hasText: /^step 0 · / }).waitFor({ timeout: 30_000 });
    expect(await cell.locator('.sw-Problem').count()).toBe(0);
  });

  it('shows a missing file at the spec line that names it', async () => {
    const page = browser.page;
    const spec = ['%%stepwell', '# stepwell: a cell whose data file is not there', 'model:', '  inputs: 4', '  layers: [{ units: 1 }]', 'data:', '  file: cooler-week3.csv', '  target: compressor_kw', ''].join('\n');
    if (!(await page.evaluate(() => 'jupyterapp' in window))) await openNotebook(page, app.url);
    const nb = { cells: [{ cell_type: 'code', id: 'missing', metadata: {}, source: spec, outputs: [], execution_count: null }], metadata: { kernelspec: { display_name: 'Python 3 (ipykernel)', language: 'python', name: 'python3' }, language_info: { name: 'python' } }, nbformat: 4, nbformat_minor: 5 };
    await contents(page, 'save', [`${FOLDER}/missing-file.ipynb`, { type: 'notebook', format: 'json', content: nb }]);
    await openNotebook(page, `${app.origin}/lab/tree/${FOLDER}/missing-file.ipynb`);
    const cell = page.locator('.jp-NotebookPanel:not(.lm-mod-hidden) .jp-Notebook .jp-CodeCell', { hasText: 'cooler-week3.csv' }).first();
    await cell.locator('.cm-content').click();
    await page.keyboard.press('Shift+Enter');
    await cell.locator('.sw-Problem').first().waitFor({ timeout: 30_000 }).catch(() => undefined);
    await screenshot(page, 'files-3-missing-file');
    const problem = cell.locator('.sw-Problem', { hasText: 'cooler-week3.csv was not read: not found' });
    await problem.waitFor({ timeout: 30_000 });
    expect(await problem.innerText()).toMatch(/^line 7:\d+ \(data\.file\): /);
    expect(await problem.innerText()).toContain("there is no 'walk-in-cooler/cooler-week3.csv'");
    expect(ourErrors(browser)).toEqual([]);
  });
});
