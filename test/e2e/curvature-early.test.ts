/**
 * The curvature readout of a model above the dense limit, in the browser: Lanczos runs in the
 * engine worker while the spectral density and the trace run in its helper thread (the reply
 * says "on 2 threads"), and the top end — λmax against the step size's limit — is shown as soon
 * as it has converged, marked as still measuring, before the complete readout replaces it.
 * Stop during the readout ends it between Lanczos steps and discards it; the next readout runs on
 * two threads again (the helper thread that was ended is started afresh).
 * Screenshots go to test-output/ (curvature-early-*.png).
 */
import type { Locator, Page } from 'playwright-core';
import { appendAndRunCell, ensureBuilt, launchBrowser, openNotebook, ourErrors, screenshot, startApp, type IAppServer, type IBrowserSession } from './harness';

jest.setTimeout(300_000);

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

/** Spec text of a classifier of our own: made-up readings (a smooth function of row and column), four classes. */
function classifierSpec(title: string, seed: number, inputs: number, units: number, activation: string, rows: number, reading: (r: number, j: number) => number, lr: number, optimizer = 'sgd'): string {
  const x = Array.from({ length: rows }, (_, r) => Array.from({ length: inputs }, (_, j) => Number(reading(r, j).toFixed(4))));
  const y = Array.from({ length: rows }, (_, r) => (r * 7 + (r >> 3)) % 4);
  const spec = {
    seed,
    model: { inputs, layers: [{ units, activation }, { units, activation }, { units: 4, activation: 'linear' }] },
    data: { x, y },
    loss: 'cross-entropy',
    recipe: { optimizer, lr },
  };
  return `# stepwell: ${title}\n${JSON.stringify(spec)}\n`;
}

/** A 16-64-64-4 network (P = 5 508, above the default dense limit of 2 000) on 128 rows. */
const mediumSpec = (): string =>
  classifierSpec('a medium network for the matrix-free curvature readout', 3, 16, 64, 'tanh', 128, (r, j) => Math.sin(0.37 * r + 1.3 * j + 0.01 * r * j), 0.2);

/** A 32-256-256-4 ReLU network (P = 75 268) on 256 rows: a readout of seconds. */
const largeSpec = (): string =>
  classifierSpec('a large network whose curvature readout takes seconds', 8, 32, 256, 'relu', 256, (r, j) => Math.cos(0.11 * r + 0.7 * j + 0.003 * r * j), 0.05);

/**
 * Clicks Measure and records, in the page as they appear, every curvature readout the cell shows
 * until the complete one: `partial: ` or `complete: ` and the head's text (with `panel`, the
 * whole readout panel's).
 */
async function readoutsShown(cell: Locator, panel: boolean): Promise<string[]> {
  await cell.evaluate((root, whole) => {
    const seen: string[] = [];
    (window as unknown as { swShown: string[] }).swShown = seen;
    new MutationObserver(() => {
      const head = root.querySelector('.sw-CurvatureHead') as HTMLElement | null;
      if (head === null) return;
      const text = `${head.dataset.partial === 'true' ? 'partial' : 'complete'}: ${(whole ? head.parentElement : head)?.textContent ?? ''}`;
      if (seen[seen.length - 1] !== text) seen.push(text);
    }).observe(root, { subtree: true, childList: true, characterData: true, attributes: true });
  }, panel);
  await cell.locator('.sw-Button-curvature').click();
  await cell.locator('.sw-CurvatureHead:not([data-partial])').waitFor({ timeout: 120_000 });
  return cell.page().evaluate(() => (window as unknown as { swShown: string[] }).swShown);
}

/**
 * Appends a cell with `spec`, runs it, takes `steps` steps (one click each), and opens its
 * Curvature tab; returns the cell.
 */
async function cellOnCurvature(page: Page, spec: string, steps = 0): Promise<Locator> {
  await appendAndRunCell(page, spec);
  const cell = page.locator('.sw-CellWidget').last();
  await cell.locator('.sw-Status', { hasText: /^step 0 · / }).waitFor({ state: 'attached', timeout: 120_000 });
  for (let s = 1; s <= steps; s++) {
    await cell.locator('.sw-Button-step').click();
    await cell.locator('.sw-Status', { hasText: new RegExp(`^step ${s} · `) }).waitFor({ state: 'attached', timeout: 60_000 });
    await cell.locator('.sw-Button-step:not([disabled])').waitFor({ timeout: 60_000 });
  }
  await cell.scrollIntoViewIfNeeded();
  await cell.locator('.sw-Tab[data-tab="curvature"]').click();
  return cell;
}

/** The cells of the derived numbers' trace row: quantity, value, how. */
async function traceRow(cell: Locator): Promise<string[]> {
  return cell.locator('.sw-DerivedTable tr', { hasText: 'trace tr(H)' }).locator('td').allInnerTexts();
}

/** {@link mediumSpec} trained with Adam: its readout also measures the step metric (the frozen preconditioner) on the helper thread. */
const mediumAdamSpec = (): string =>
  classifierSpec('a medium network trained with Adam', 3, 16, 64, 'tanh', 128, (r, j) => Math.sin(0.37 * r + 1.3 * j + 0.01 * r * j), 0.01, 'adam');

describe('the curvature readout above the dense limit', () => {
  it('shows the top end first, then the complete readout computed on two threads', async () => {
    const { page } = browser;
    await openNotebook(page, `${app.origin}/lab/tree/greenhouse-humidity-sensor.ipynb`);
    const cell = await cellOnCurvature(page, mediumSpec());
    const heads = await readoutsShown(cell, false);
    expect(heads.length).toBeGreaterThanOrEqual(2);
    expect(heads[0]).toMatch(/^partial: At step 0, top end: λmax = [\d.]+ \(± [\d.e+-]+\) — Lanczos over 5508 parameters, \d+ Hessian-vector products so far\. Still measuring: the smallest eigenvalues, the spectral density and the trace\.$/);
    const last = heads[heads.length - 1];
    // Chromium runs relaxed SIMD, so the readout's products fuse their multiply-adds and say so.
    expect(last).toMatch(/^complete: At step 0: λmax = [\d.]+ \(± [\d.e+-]+\), λmin = -?[\d.]+ — Lanczos over 5508 parameters, \d+ Hessian-vector products on 2 threads, with fused multiply-add\.$/);
    // Both show λmax to the digits shown (Golub & Van Loan 4th ed., §10.1.4: the early value lies within its bound).
    const lam = (t: string): string => /λmax = ([\d.]+)/.exec(t)?.[1] ?? 'none';
    expect(lam(heads[0])).toBe(lam(last));
    const products = (t: string): number => Number(/, (\d+) Hessian-vector/.exec(t)?.[1] ?? NaN);
    expect(products(heads[0])).toBeLessThan(products(last));
    // The derived numbers come with the complete readout only.
    await cell.locator('.sw-DerivedTable').waitFor({ timeout: 10_000 });
    // tanh is not piecewise linear, so the Hessian's trace is Hutchinson's estimate, and the row says so.
    expect(await traceRow(cell)).toEqual(expect.arrayContaining(["Hutchinson's estimate ± its standard error"]));
    await screenshot(page, 'curvature-early-complete');
    expect(ourErrors(browser)).toEqual([]);
  });

  it('stops between Lanczos steps when Stop is clicked, discards the partial readout, and measures on two threads again afterwards', async () => {
    const { page } = browser;
    const cell = await cellOnCurvature(page, largeSpec());
    await cell.locator('.sw-Button-curvature').click();
    await cell.locator('.sw-CurvatureHead[data-partial="true"]').waitFor({ timeout: 60_000 });
    const stopAt = Date.now();
    await cell.locator('.sw-Button-stop').click();
    await cell.locator('.sw-Notice', { hasText: 'Curvature readout stopped: the partial result was discarded.' }).waitFor({ timeout: 30_000 });
    // A step of Lanczos plus a turn of the worker's loop, far less than the rest of the readout.
    expect(Date.now() - stopAt).toBeLessThan(3_000);
    expect(await cell.locator('.sw-CurvatureHead').count()).toBe(0);
    await screenshot(page, 'curvature-early-stopped');
    await cell.locator('.sw-Button-curvature').click();
    await cell.locator('.sw-CurvatureHead:not([data-partial])').waitFor({ timeout: 120_000 });
    expect(await cell.locator('.sw-CurvatureHead').textContent()).toMatch(/^At step 0: λmax = [\d.]+ \(± [\d.e+-]+\), λmin = -?[\d.]+ — Lanczos over 75268 parameters, \d+ Hessian-vector products on 2 threads, with fused multiply-add\.$/);
    // Every activation is ReLU or linear: the trace is exact (no ± in its value) and the row says why.
    const trace = await traceRow(cell);
    expect(trace[1]).not.toContain('±');
    expect(trace[2]).toBe('exact, by two backward passes per output: every activation is piecewise linear, so the Hessian’s diagonal is the Gauss–Newton one');
    expect(ourErrors(browser)).toEqual([]);
  });

  it('measures an adaptive optimizer’s step metric on the helper thread: the top end and the complete readout both carry it', async () => {
    const { page } = browser;
    // Before the first update there is no preconditioner, so no step metric: take one step.
    const cell = await cellOnCurvature(page, mediumAdamSpec(), 1);
    const panels = await readoutsShown(cell, true);
    const partial = panels.find(t => t.startsWith('partial: '));
    const complete = panels[panels.length - 1];
    expect(partial).toBeDefined();
    expect(complete.startsWith('complete: ')).toBe(true);
    expect(complete).toMatch(/At step 1: λmax = [\d.]+ .* Hessian-vector products on 2 threads, with fused multiply-add\./);
    // Both name the operator the bound is taken on: the frozen preconditioner's step metric, measured by the helper.
    for (const t of [partial ?? '', complete]) expect(t).toContain('operator: frozen diagonal preconditioner P^-1');
    await screenshot(page, 'curvature-early-adam');
    expect(ourErrors(browser)).toEqual([]);
  });
});
