/**
 * Journeys 1 and 2 with the findings, in the real app in headless Chromium.
 *
 * Journey 1 (greenhouse demo): the `step-size-unstable` finding shows with its source (by mouse
 * and by keyboard); after the demo's fix branch is deleted, "Try as branch" makes it again and
 * shows it; stepped with the sharpness tracked it stays within its limit, and the overlay says
 * so; the decision record is written; the curvature and the audit are measured; after saving and
 * reloading the page, the findings, the curvature and the audit are shown from the notebook with
 * no engine started (the only worker is the page's ledger reader). Journey 2 (parcel-sorter demo): the initialization
 * check marks the off-rule scale, the layer balance over time has a row per layer, and after the
 * demo's fix branch is deleted "Try as branch" on `init-scale` makes it again and leaves the plateau.
 * Light and dark screenshots go to test-output/.
 */
import type { Locator, Page } from 'playwright-core';
import { ensureBuilt, executeCommand, launchBrowser, openNotebook, ourErrors, screenshot, startApp, type IAppServer, type IBrowserSession } from './harness';

jest.setTimeout(480_000);

let app: IAppServer;
let browser: IBrowserSession;

beforeAll(async () => {
  ensureBuilt();
  app = await startApp();
  browser = await launchBrowser();
  // Count engine workers, so a reload can show it started none.
  await browser.context.addInitScript(() => {
    const W = window.Worker;
    const w = window as unknown as { swWorkers: number };
    w.swWorkers = 0;
    window.Worker = class extends W {
      constructor(url: string | URL, options?: WorkerOptions) {
        super(url, options);
        if (String(url).includes('engine')) w.swWorkers++;
      }
    };
  });
});

afterAll(async () => {
  await browser?.close();
  await app?.stop();
});

const status = (cell: Locator): Promise<string> => cell.locator('.sw-Status').innerText();

async function waitForStatus(cell: Locator, pattern: RegExp, timeout = 90_000): Promise<void> {
  await cell.locator('.sw-Status', { hasText: pattern }).waitFor({ timeout });
}

/** The loss the status line shows. */
async function statusLoss(cell: Locator): Promise<number> {
  const m = /loss (\S+)/.exec(await status(cell));
  return m === null ? NaN : Number(m[1]);
}

const workers = (page: Page): Promise<number> => page.evaluate(() => (window as unknown as { swWorkers: number }).swWorkers);

/** Deletes a branch through the branch bar, confirming. */
async function deleteBranch(cell: Locator, name: string): Promise<void> {
  await cell.locator(`.sw-Branch[data-branch="${name}"]`).click();
  await cell.locator('.sw-Status', { hasText: `branch ${name}` }).waitFor({ timeout: 60_000 });
  await cell.locator('.sw-Button-delete').click();
  await cell.locator('.sw-Button-confirm').click();
  await cell.locator('.sw-Notice', { hasText: `Deleted ${name}.` }).waitFor({ timeout: 30_000 });
}

describe('diagnosis in the browser', () => {
  it('journey 1: the unstable step size, its source, Try as branch, a stable branch, the record, and everything back after a reload', async () => {
    const page = browser.page;
    await openNotebook(page, `${app.origin}/lab/tree/greenhouse-humidity-sensor.ipynb`);
    const cell = page.locator('.sw-CellWidget').first();
    await cell.waitFor();
    await waitForStatus(cell, /^step 14 · /);
    const unstable = cell.locator('.sw-Finding[data-finding="step-size-unstable"]');
    await unstable.waitFor();
    expect(await unstable.locator('.sw-FindingSeverity').innerText()).toMatch(/problem/i);
    expect(await unstable.locator('.sw-FindingStatement').innerText()).toMatch(/^At step 0 the learning rate 0\.9 exceeds the largest stable rate /);
    // What was measured, in its unit, against the threshold (the largest stable rate, 2/λmax at step 0).
    expect(await unstable.locator('.sw-FindingMeasured').innerText()).toMatch(/^learning rate 0\.9 · threshold 0\.73\d+$/);
    // The source on hover…
    expect(await unstable.locator('.sw-FindingMeasured').getAttribute('title')).toContain('Nocedal & Wright');
    // …and by keyboard: the disclosure is focusable and opens with Enter.
    await unstable.locator('.sw-FindingSource summary').focus();
    await page.keyboard.press('Enter');
    expect(await unstable.locator('.sw-FindingSource').getAttribute('open')).not.toBeNull();
    expect(await unstable.locator('.sw-FindingSource span').innerText()).toContain('gradient descent on a quadratic converges iff η < 2/λmax');
    await unstable.scrollIntoViewIfNeeded();
    await screenshot(page, 'diagnosis-1-finding-source');
    const shownName = (await unstable.locator('.sw-Button-try').innerText()).replace(/^Show branch /, '');
    expect(shownName).toMatch(/^lr=0\.\d+$/);

    // Without the demo's fix branch, the button tries the proposal afresh.
    await deleteBranch(cell, shownName);
    await waitForStatus(cell, /branch main|· sgd η=0\.9/);
    const tryButton = unstable.locator('.sw-Button-try');
    await tryButton.waitFor();
    expect(await tryButton.innerText()).toBe('Try as branch');
    expect(await tryButton.getAttribute('aria-label')).toMatch(/^Try the proposal of step-size-unstable as a branch: from step 0, lr=0\.\d+$/);
    await tryButton.click();
    await cell.locator('.sw-Notice', { hasText: /^Trying the proposal of step-size-unstable: branch lr=0\.\d+ from step 0 of main/ }).waitFor({ timeout: 30_000 });
    await waitForStatus(cell, new RegExp(`^step 0 · .* · branch ${shownName.replace('.', '\\.')} ·`));
    await screenshot(page, 'diagnosis-2-tried');

    // Step it tracking λmax: it stays within its limit.
    await cell.locator('.sw-StepN').fill('60');
    await cell.locator('.sw-Tab[data-tab="curvature"]').click();
    await cell.locator('.sw-Button-track').click();
    await waitForStatus(cell, /^step 60 · /);
    await cell.locator('.sw-Stability', { hasText: 'Over 61 measurements with a limit (steps 0–60) the sharpness stayed below the stability limit.' }).waitFor({ timeout: 30_000 });
    expect(await cell.locator('.sw-Finding[data-finding="step-size-unstable"]').count()).toBe(0);
    expect(await statusLoss(cell)).toBeLessThan(0.01);

    // The overlay: both branches' sharpness against their limits, and the crossings in words.
    await cell.locator('.sw-Tab[data-tab="compare"]').click();
    await cell.locator('.sw-CompareSharpnessPlot .scatterlayer .trace').first().waitFor({ timeout: 30_000 });
    await cell.locator('.sw-Compare', { hasText: `${shownName}: the sharpness stayed within the stability limit over 61 measurements.` }).waitFor({ timeout: 30_000 });
    await cell.locator('.sw-Compare', { hasText: 'main: the sharpness first exceeded the stability limit at step 0' }).waitFor();
    await cell.locator('.sw-Compare').scrollIntoViewIfNeeded();
    await screenshot(page, 'diagnosis-3-overlay');

    // The decision record, written by the product (replacing the demo's after asking).
    await cell.locator('.sw-Button-record').click();
    const rec = cell.locator('.sw-RecordForm');
    await rec.locator('.sw-RecordQuestion').fill('Which learning rate keeps the calibration stable?');
    await rec.locator('.sw-RecordChoice').selectOption(shownName);
    await rec.locator('.sw-Button-writeRecord').click();
    await cell.locator('.sw-Button-confirm').click();
    await cell.locator('.sw-Notice', { hasText: `Decision record written below the cell (chosen: ${shownName})` }).waitFor({ timeout: 30_000 });
    const recordCell = page.locator('.jp-MarkdownCell', { hasText: 'Which learning rate keeps the calibration stable?' });
    await recordCell.locator('.jp-MarkdownOutput', { hasText: `tried as branch ${shownName}` }).waitFor({ timeout: 20_000 });

    // Back on main: measure the curvature and audit the gradient there, then save.
    await cell.locator(`.sw-Branch[data-branch="main"]`).click();
    await waitForStatus(cell, /^step 14 · /);
    await cell.locator('.sw-Tab[data-tab="curvature"]').click();
    await cell.locator('.sw-Button-curvature').click();
    await cell.locator('.sw-CurvatureHead', { hasText: 'At step 14: λmax' }).waitFor({ timeout: 60_000 });
    const lambda = await cell.locator('.sw-CurvatureHead').innerText();
    await cell.locator('.sw-Tab[data-tab="audit"]').click();
    await cell.locator('.sw-Readout button', { hasText: 'Run gradient audit' }).click();
    await cell.locator('.sw-AuditTable').waitFor({ timeout: 60_000 });
    const auditRows = await cell.locator('.sw-AuditTable tbody tr').count();
    expect(auditRows).toBe(2);
    const findingsBefore = await cell.locator('.sw-Finding').evaluateAll(nodes => nodes.map(n => (n as HTMLElement).dataset.finding));
    expect(findingsBefore).toContain('step-size-unstable');
    await page.keyboard.press('Escape');
    await page.keyboard.press('Control+s');
    await page.locator('.jp-mod-dirty').waitFor({ state: 'detached', timeout: 20_000 }).catch(() => undefined);
    await page.waitForTimeout(1000);

    // Reload: findings, curvature and audit come back from the notebook; no engine starts.
    await page.reload({ waitUntil: 'domcontentloaded' });
    const again = page.locator('.sw-CellWidget').first();
    await again.waitFor({ timeout: 60_000 });
    await waitForStatus(again, /^step 14 · /);
    const findingsAfter = await again.locator('.sw-Finding').evaluateAll(nodes => nodes.map(n => (n as HTMLElement).dataset.finding));
    expect(findingsAfter).toEqual(findingsBefore);
    expect(await again.locator('.sw-Finding[data-finding="step-size-unstable"] .sw-Button-try').innerText()).toBe(`Show branch ${shownName}`);
    await again.locator('.sw-Tab[data-tab="curvature"]').click();
    expect(await again.locator('.sw-CurvatureHead').innerText()).toBe(lambda);
    await again.locator('.sw-Tab[data-tab="audit"]').click();
    expect(await again.locator('.sw-AuditTable tbody tr').count()).toBe(auditRows);
    await again.locator('.sw-Tab[data-tab="layers"]').click();
    await again.locator('.sw-HeatMap').waitFor();
    // One worker only: the page's ledger reader (it opens stored ledgers off the page thread and
    // runs no session); no cell started an engine of its own.
    expect(await workers(page)).toBe(1);
    await again.locator('.sw-Findings').scrollIntoViewIfNeeded();
    await screenshot(page, 'diagnosis-4-reloaded');

    // Dark theme.
    await executeCommand(page, 'apputils:change-theme', { theme: 'JupyterLab Dark' });
    await page.waitForFunction(() => document.body.dataset.jpThemeLight === 'false', undefined, { timeout: 20_000 });
    await page.waitForTimeout(1500);
    await again.locator('.sw-Findings').scrollIntoViewIfNeeded();
    await screenshot(page, 'diagnosis-5-findings-dark');
    await again.locator('.sw-Layers').scrollIntoViewIfNeeded();
    await screenshot(page, 'diagnosis-6-layers-dark');
    await executeCommand(page, 'apputils:change-theme', { theme: 'JupyterLab Light' });
    await page.waitForFunction(() => document.body.dataset.jpThemeLight === 'true', undefined, { timeout: 20_000 });
    expect(await workers(page)).toBe(1);
    expect(ourErrors(browser)).toEqual([]);
  });

  it('journey 2: the initialization check shows the off-rule scale, and the proposal leaves the plateau', async () => {
    const page = browser.page;
    await openNotebook(page, `${app.origin}/lab/tree/parcel-sorter-plateau.ipynb`);
    // The greenhouse notebook stays open in a hidden tab: take the cell of the one shown.
    const cell = page.locator('.jp-NotebookPanel:not(.lm-mod-hidden) .sw-CellWidget').first();
    await cell.waitFor();
    await waitForStatus(cell, /^step 100 · /);
    await cell.locator('.sw-Finding[data-finding="plateau"]').waitFor();
    const scale = cell.locator('.sw-Finding[data-finding="init-scale"]');
    expect(await scale.locator('.sw-FindingStatement').innerText()).toMatch(/^Layer 0's initial weight spread 0\.0289 under lecun-normal at gain 0\.05 is 20× below the fan-in rule's 0\.577 for tanh/);
    await cell.locator('.sw-Tab[data-tab="layers"]').click();
    const init = cell.locator('.sw-InitTable');
    await init.waitFor();
    // Every layer off the fan-in rule by 20×: marked.
    expect(await init.locator('tbody tr.sw-mod-off').count()).toBe(4);
    expect(await init.locator('tbody tr').first().innerText()).toContain('0.05×');
    expect(await scale.locator('.sw-FindingMeasured').innerText()).toBe('initial spread against the fan-in rule 0.05× · threshold 0.5×');
    // The layer balance over time: a row per layer, a column per drawn step from 1 to 100 (long runs are sampled).
    const heat = cell.locator('.sw-HeatMap');
    expect(await heat.locator('tbody tr').count()).toBe(4);
    const steps = await heat.locator('thead th.sw-HeatStep').allInnerTexts();
    expect(steps.length).toBeGreaterThan(10);
    expect([steps[0], steps[steps.length - 1]]).toEqual(['1', '100']);
    expect(await heat.locator('tbody tr').first().locator('td').count()).toBe(steps.length);
    expect(await heat.locator('tbody tr').first().locator('td').first().getAttribute('title')).toMatch(/^step 1, layer 0: log10 ratio -?\d+\.\d\d \(ratio \d\.\de-\d\)$/);
    await init.scrollIntoViewIfNeeded();
    await screenshot(page, 'diagnosis-7-init-check');
    const plateauLoss = await statusLoss(cell);

    const fix = 'init=lecun-normal,gain=1';
    await deleteBranch(cell, fix);
    await scale.locator('.sw-Button-try', { hasText: 'Try as branch' }).click();
    await waitForStatus(cell, new RegExp(`^step 0 · .* · branch ${fix} ·`));
    await cell.locator('.sw-StepN').fill('100');
    await cell.locator('.sw-Button-stepN').click();
    await waitForStatus(cell, new RegExp(`^step 100 · .* · branch ${fix} ·`));
    expect(await statusLoss(cell)).toBeLessThan(0.5 * plateauLoss);
    expect(await cell.locator('.sw-Finding[data-finding="plateau"]').count()).toBe(0);
    await cell.locator('.sw-Tab[data-tab="layers"]').click();
    await cell.locator('.sw-HeatMap').scrollIntoViewIfNeeded();
    await screenshot(page, 'diagnosis-8-left-plateau');
    expect(ourErrors(browser)).toEqual([]);
  });
});
