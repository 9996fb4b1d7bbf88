/**
 * The Deeper tab in the browser, on the dough-proofing demo (a formula activation): every kept
 * deeper readout shows from the notebook alone (no engine started) with where it was taken;
 * stepping marks them stale; a 2-D slice over the top two eigenvectors is taken again with its
 * progress shown; a long batch-size comparison is stopped midway (its partial result is
 * discarded, the earlier one stays, the cell steps on); after a save and a reload the kept
 * readouts — the new slice among them — come back without an engine. Screenshots go to
 * test-output/.
 */
import type { Locator, Page } from 'playwright-core';
import { ensureBuilt, executeCommand, launchBrowser, openNotebook, ourErrors, screenshot, startApp, type IAppServer, type IBrowserSession } from './harness';

jest.setTimeout(300_000);

let app: IAppServer;
let browser: IBrowserSession;

const NOTEBOOK = 'dough-proofing/dough-proofing.ipynb';

beforeAll(async () => {
  ensureBuilt();
  app = await startApp();
  browser = await launchBrowser();
  // Count engine workers, so the stored readouts can be shown to need none.
  await browser.context.addInitScript(() => {
    const W = window.Worker;
    const w = window as unknown as { swWorkers: number; swProgress: string[] };
    w.swWorkers = 0;
    w.swProgress = [];
    window.Worker = class extends W {
      constructor(url: string | URL, options?: WorkerOptions) {
        super(url, options);
        if (String(url).includes('engine')) w.swWorkers++;
      }
    };
    // Every text the progress line shows while work runs (read after the work, so no timing race).
    new MutationObserver(() => {
      for (const n of document.querySelectorAll('.sw-ProgressText')) {
        const t = (n as HTMLElement).innerText;
        if (t !== '' && w.swProgress[w.swProgress.length - 1] !== t) w.swProgress.push(t);
      }
    }).observe(document, { subtree: true, childList: true, characterData: true });
  });
});

afterAll(async () => {
  await browser?.close();
  await app?.stop();
});

const workers = (page: Page): Promise<number> => page.evaluate(() => (window as unknown as { swWorkers: number }).swWorkers);
const progressSeen = (page: Page): Promise<string[]> => page.evaluate(() => (window as unknown as { swProgress: string[] }).swProgress.splice(0));

async function waitForStatus(cell: Locator, pattern: RegExp, timeout = 90_000): Promise<void> {
  await cell.locator('.sw-Status', { hasText: pattern }).waitFor({ timeout });
}

/** Picks a readout on the Deeper tab. */
async function choose(cell: Locator, kind: string): Promise<void> {
  await cell.locator(`.sw-DeeperKind[data-kind="${kind}"]`).click();
  await cell.locator(`.sw-DeeperKind[data-kind="${kind}"][aria-pressed="true"]`).waitFor();
}

/** The drawn traces in a plot node of the Deeper tab. */
const traces = (cell: Locator, plot: string): Locator => cell.locator(`${plot} .scatterlayer .trace`);

describe('the Deeper tab in the browser', () => {
  it('shows every kept readout without an engine, marks them stale, takes a slice with progress, stops a long comparison, and keeps them over a reload', async () => {
    const page = browser.page;
    await openNotebook(page, `${app.origin}/lab/tree/${NOTEBOOK}`);
    const cell = page.locator('.sw-CellWidget').first();
    await cell.waitFor();
    await waitForStatus(cell, /^step 60 · /);
    await cell.locator('.sw-Tab[data-tab="deeper"]').click();

    // Each kept readout, from the notebook alone.
    const where = cell.locator('.sw-DeeperWhere');
    const shown: [string, string, string][] = [
      ['line', 'Line profile taken at step 60 of branch main', '.sw-DeeperLineUpdate'],
      ['plane', '2-D slice taken at step 60 of branch main', '.sw-DeeperPlane'],
      ['range', 'Learning-rate range test taken at step 60 of branch main', '.sw-DeeperRange'],
      ['batch', 'Batch sizes taken at step 60 of branch main', '.sw-DeeperBatch'],
      ['precision', 'Precision tolerance taken at step 60 of branch main', '']
    ];
    expect(shown).toHaveLength(5);
    for (const [kind, heading, plot] of shown) {
      await choose(cell, kind);
      await where.filter({ hasText: heading }).waitFor({ timeout: 30_000 });
      expect(await cell.locator('.sw-Deeper .sw-Stale').count()).toBe(0);
      if (plot !== '') await traces(cell, plot).first().waitFor({ timeout: 30_000 });
      await cell.locator('.sw-Deeper').scrollIntoViewIfNeeded();
      await screenshot(page, `deeper-1-${kind}`);
    }
    // the line: along the update and along the top eigenvector, each with loss, model, step and Brent's minimum
    await choose(cell, 'line');
    await traces(cell, '.sw-DeeperLineEigen').first().waitFor();
    expect(await traces(cell, '.sw-DeeperLineUpdate').count()).toBe(4);
    // precision: the float64 row first, then 16, 10, 8, 6, 4 bits
    await choose(cell, 'precision');
    const bits = await cell.locator('.sw-PrecisionTable tbody tr td:first-child').allInnerTexts();
    expect(bits).toEqual(['53 (float64)', '16', '10', '8', '6', '4']);
    // batch: three runs, the lowest final loss marked
    await choose(cell, 'batch');
    expect(await cell.locator('input[data-option="batchSizes"]').inputValue()).toBe('2, 4, 12');
    expect(await cell.locator('.sw-BatchTable tbody tr').count()).toBe(3);
    expect(await cell.locator('.sw-BatchTable tbody tr.sw-mod-best td:first-child').innerText()).toBe('12 (full)');
    expect(await workers(page)).toBe(1);

    // Stepping on marks the kept readouts stale.
    await cell.locator('.sw-StepN').fill('5');
    await cell.locator('.sw-Button-stepN').click();
    await waitForStatus(cell, /^step 65 · /);
    await choose(cell, 'plane');
    await cell.locator('.sw-Deeper .sw-Stale', { hasText: 'Measured at step 60; the branch is now at step 65.' }).waitFor({ timeout: 30_000 });
    await screenshot(page, 'deeper-2-stale');

    // A slice over the top two eigenvectors, 61 points a side, with its progress shown.
    await progressSeen(page);
    await cell.locator('.sw-DeeperDirections').selectOption('eigenvectors');
    await cell.locator('input[data-option="planePoints"]').fill('61');
    await cell.locator('.sw-Button-deeper').click();
    await where.filter({ hasText: '2-D slice taken at step 65 of branch main' }).waitFor({ timeout: 120_000 });
    const planeProgress = await progressSeen(page);
    console.log(`progress shown during the 61 × 61 slice: ${JSON.stringify(planeProgress)}`);
    expect(planeProgress.some(t => t.startsWith('2-D slice'))).toBe(true);
    expect(await cell.locator('.sw-Deeper .sw-Stale').count()).toBe(0);
    await traces(cell, '.sw-DeeperPlane').first().waitFor({ timeout: 30_000 });
    expect(await cell.locator('.sw-Deeper .sw-Note', { hasText: '61 × 61 grid over the top two eigenvectors' }).count()).toBe(1);
    await cell.locator('.sw-Deeper').scrollIntoViewIfNeeded();
    await screenshot(page, 'deeper-3-eigen-plane');

    // A range test over 400 rates, with its progress shown; kept as the step-65 one.
    await choose(cell, 'range');
    await cell.locator('input[data-option="rangeSteps"]').fill('400');
    await cell.locator('.sw-Button-deeper').click();
    await where.filter({ hasText: 'Learning-rate range test taken at step 65 of branch main' }).waitFor({ timeout: 120_000 });
    const rangeProgress = await progressSeen(page);
    console.log(`progress shown during the range test: ${JSON.stringify(rangeProgress)}`);
    expect(rangeProgress.some(t => t.startsWith('Learning-rate range test'))).toBe(true);
    await traces(cell, '.sw-DeeperRange').first().waitFor({ timeout: 30_000 });

    // A long batch-size comparison, stopped midway: discarded, the step-60 one stays, the cell steps on.
    await choose(cell, 'batch');
    await cell.locator('input[data-option="batchSizes"]').fill('1, 2');
    await cell.locator('input[data-option="batchExamples"]').fill('100000');
    await cell.locator('.sw-Button-deeper').click();
    const progress = cell.locator('.sw-ProgressText', { hasText: /^Batch sizes: \d+ \/ \d+$/ });
    await progress.waitFor({ timeout: 60_000 });
    await screenshot(page, 'deeper-4-progress');
    await cell.locator('.sw-Button-stop').click();
    await cell.locator('.sw-Notice', { hasText: 'Batch sizes stopped: the partial result was discarded (the one taken at step 60 is still shown).' }).waitFor({ timeout: 60_000 });
    await where.filter({ hasText: 'Batch sizes taken at step 60 of branch main' }).waitFor();
    expect(await cell.locator('.sw-BatchTable tbody tr').count()).toBe(3);
    await screenshot(page, 'deeper-5-stopped');
    await cell.locator('.sw-Button-step').click();
    await waitForStatus(cell, /^step 66 · /);
    // the ledger is written after the reply that moves the status line: give it time before saving
    await page.waitForTimeout(2000);

    // Saved and reloaded: the kept readouts come back without an engine.
    await page.keyboard.press('Escape');
    await page.keyboard.press('Control+s');
    await page.locator('.jp-mod-dirty').waitFor({ state: 'detached', timeout: 20_000 }).catch(() => undefined);
    await page.waitForTimeout(1000);
    await page.reload({ waitUntil: 'domcontentloaded' });
    const again = page.locator('.sw-CellWidget').first();
    await again.waitFor({ timeout: 60_000 });
    await waitForStatus(again, /^step 66 · /);
    await again.locator('.sw-Tab[data-tab="deeper"]').click();
    await choose(again, 'plane');
    await again.locator('.sw-DeeperWhere', { hasText: '2-D slice taken at step 65 of branch main' }).waitFor({ timeout: 30_000 });
    await again.locator('.sw-Deeper .sw-Stale', { hasText: 'Measured at step 65; the branch is now at step 66.' }).waitFor();
    await traces(again, '.sw-DeeperPlane').first().waitFor({ timeout: 30_000 });
    await choose(again, 'batch');
    await again.locator('.sw-DeeperWhere', { hasText: 'Batch sizes taken at step 60 of branch main' }).waitFor();
    expect(await workers(page)).toBe(1);
    await again.locator('.sw-Deeper').scrollIntoViewIfNeeded();
    await screenshot(page, 'deeper-6-reloaded');

    // The branches differ only in batch size: compared by examples seen, beside the noise scale.
    await again.locator('.sw-Tab[data-tab="compare"]').click();
    const note = again.locator('.sw-BatchNote');
    await note.filter({ hasText: 'These branches differ only in batch size' }).waitFor({ timeout: 90_000 });
    expect(await note.innerText()).toContain('main: 4, batch-12: 12 (full batch)');
    expect(await note.innerText()).toMatch(/Gradient noise scale of main at step 60: B = [0-9.]+/);
    expect(await again.locator('.sw-Compare input[type="radio"][value="examples"]').isChecked()).toBe(true);
    await again.locator('.sw-ComparePlot .scatterlayer .trace').first().waitFor({ timeout: 30_000 });
    await note.scrollIntoViewIfNeeded();
    await screenshot(page, 'deeper-7-compare-batch');

    // Dark theme: the tab reads from the theme's variables.
    await executeCommand(page, 'apputils:change-theme', { theme: 'JupyterLab Dark' });
    await page.waitForFunction(() => document.body.dataset.jpThemeLight === 'false', undefined, { timeout: 20_000 });
    await again.locator('.sw-Tab[data-tab="deeper"]').click();
    await choose(again, 'plane');
    await traces(again, '.sw-DeeperPlane').first().waitFor({ timeout: 30_000 });
    await page.waitForTimeout(1000);
    await again.locator('.sw-Deeper').scrollIntoViewIfNeeded();
    await screenshot(page, 'deeper-8-dark');
    await executeCommand(page, 'apputils:change-theme', { theme: 'JupyterLab Light' });
    expect(ourErrors(browser)).toEqual([]);
  });
});
