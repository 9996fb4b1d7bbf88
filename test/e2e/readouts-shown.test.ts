/**
 * What the readouts show, checked in the page as a user sees it (issue-15 faults confirmed in the
 * browser, not only in the figure builders' unit tests): the curvature's derived numbers one per
 * row with how each was obtained; a curvature measured at an earlier step says so after the
 * branch moves on; the status line never shows a meaningless "0.0 µs/step" and keeps its timing
 * after a reload; step axes tick whole steps; legends sit clear of the plot toolbar.
 * Screenshots go to test-output/ (readouts-*.png).
 */
import type { Locator, Page } from 'playwright-core';
import { ensureBuilt, launchBrowser, openNotebook, ourErrors, screenshot, startApp, type IAppServer, type IBrowserSession } from './harness';

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

const status = (cell: Locator): Promise<string> => cell.locator('.sw-Status').innerText();

async function waitForStatus(cell: Locator, pattern: RegExp, timeout = 90_000): Promise<void> {
  await cell.locator('.sw-Status', { hasText: pattern }).waitFor({ timeout });
}

/** The x-axis tick labels of the first plot under `root`. */
async function xTicks(root: Locator): Promise<string[]> {
  await root.locator('.xtick text').first().waitFor({ timeout: 30_000 });
  return root.locator('.xtick text').evaluateAll(nodes => nodes.map(n => n.textContent ?? ''));
}

/** Whether the plot's legend box and its toolbar box intersect (the toolbar shown by hovering). */
async function legendOverlapsToolbar(page: Page, plot: Locator): Promise<boolean> {
  await plot.hover();
  const legend = await plot.locator('.legend').first().boundingBox();
  const bar = await plot.locator('.modebar').first().boundingBox();
  if (legend === null || bar === null) throw new Error(`legend ${JSON.stringify(legend)} or toolbar ${JSON.stringify(bar)} not laid out`);
  await page.mouse.move(0, 0);
  return legend.x < bar.x + bar.width && bar.x < legend.x + legend.width && legend.y < bar.y + bar.height && bar.y < legend.y + legend.height;
}

describe('readouts as shown in the page', () => {
  it('derived numbers in rows, a stale curvature says so, whole-step ticks, legends clear of the toolbar, a meaningful timing', async () => {
    const { page } = browser;
    await openNotebook(page, `${app.origin}/lab/tree/greenhouse-humidity-sensor.ipynb`);
    const cell = page.locator('.sw-CellWidget').first();
    await waitForStatus(cell, /^step 14 · /);

    // Short trace: the step axis ticks whole steps only.
    const trace = cell.locator('.sw-TracePlot');
    const ticks = await xTicks(trace);
    expect(ticks.length).toBeGreaterThan(1);
    for (const t of ticks) expect(t.replace('−', '-')).toMatch(/^-?\d+$/);
    expect(await legendOverlapsToolbar(page, trace)).toBe(false);

    // Curvature at step 14: the derived numbers one per row, the condition number with how it was obtained.
    await cell.locator('.sw-Tab[data-tab="curvature"]').click();
    await cell.locator('.sw-Button-curvature').click();
    await cell.locator('.sw-CurvatureHead', { hasText: 'At step 14: λmax' }).waitFor({ timeout: 60_000 });
    const kappa = cell.locator('.sw-DerivedTable tr', { hasText: 'condition number κ' });
    const kappaCells = await kappa.locator('td').allInnerTexts();
    expect(kappaCells).toHaveLength(3);
    expect(Number(kappaCells[1].replace(/[^\d.e+-]/g, ''))).toBeGreaterThan(1);
    expect(kappaCells[2].length).toBeGreaterThan(10);
    // Readable: the row's text is not clipped and not smaller than the cell's other notes.
    const clipped = await kappa.locator('td').evaluateAll(tds => tds.some(td => (td as HTMLElement).scrollWidth > (td as HTMLElement).clientWidth + 1));
    expect(clipped).toBe(false);
    expect(await legendOverlapsToolbar(page, cell.locator('.sw-CurvaturePlot').first())).toBe(false);
    await screenshot(page, 'readouts-1-curvature-current');

    // Step on tracking λmax: the spectrum measured at 14 now says it is stale.
    await cell.locator('.sw-StepN').fill('5');
    await cell.locator('.sw-Button-track').click();
    await waitForStatus(cell, /^step 19 · /);
    await cell.locator('.sw-Stale', { hasText: 'Measured at step 14; the branch is now at step 19.' }).waitFor({ timeout: 30_000 });
    const sharpTicks = await xTicks(cell.locator('.sw-SharpnessPlot'));
    for (const t of sharpTicks) expect(t.replace('−', '-')).toMatch(/^-?\d+$/);
    expect(await legendOverlapsToolbar(page, cell.locator('.sw-SharpnessPlot'))).toBe(false);
    await screenshot(page, 'readouts-2-curvature-stale');

    // The timing: never a meaningless "0.0 µs/step"; when shown, it is back after a reload.
    await cell.locator('.sw-StepN').fill('1');
    await cell.locator('.sw-Button-stepN').click();
    await waitForStatus(cell, /^step 20 · /);
    const before = await status(cell);
    expect(before).not.toMatch(/\b0\.0 µs\/step/);
    const timing = /((?:< )?\S+ (?:µs|ms)\/step)/.exec(before)?.[1] ?? null;
    await page.keyboard.press('Escape');
    await page.keyboard.press('Control+s');
    await page.locator('.jp-mod-dirty').waitFor({ state: 'detached', timeout: 20_000 }).catch(() => undefined);
    await page.waitForTimeout(1000);
    await page.reload({ waitUntil: 'domcontentloaded' });
    const again = page.locator('.sw-CellWidget').first();
    await waitForStatus(again, /^step 20 · /, 60_000);
    const after = await status(again);
    expect(after).not.toMatch(/\b0\.0 µs\/step/);
    // The same records give the same figure before and after the reload.
    expect(timing).not.toBeNull();
    expect(/((?:< )?\S+ (?:µs|ms)\/step)/.exec(after)?.[1] ?? null).toBe(timing);
    await screenshot(page, 'readouts-3-after-reload');
    console.log(`status before reload: ${before}\nstatus after reload: ${after}`);
    expect(ourErrors(browser)).toEqual([]);
  });
});
