/**
 * The stepwell-cell journey in the real app, in headless Chromium: open the first demo
 * notebook, insert a stepwell cell from the command palette, break its spec (inline error
 * at the right line), fix it, run it, Step ×N, save, reload (step and trace persist,
 * restored without re-running), Verify (bit-identical), and keep the page responsive
 * during a long run that is then stopped. Screenshots go to test-output/.
 */
import type { Locator, Page } from 'playwright-core';
import {
  ensureBuilt,
  launchBrowser,
  openNotebook,
  ourErrors,
  runPaletteCommand,
  screenshot,
  startApp,
  type IAppServer,
  type IBrowserSession
} from './harness';

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

/** The status line text of a stepwell widget. */
const status = (cell: Locator): Promise<string> => cell.locator('.sw-Status').innerText();

/** Waits until a cell's status line says it is at `step`. */
async function waitForStep(cell: Locator, step: number, timeout = 60_000): Promise<void> {
  await cell.locator('.sw-Status', { hasText: new RegExp(`^step ${step}( \\(of \\d+\\))? ·`) }).waitFor({ timeout });
}

/** Replaces the text of the editor line containing `needle` (after its indentation) by typing. */
async function retypeLine(page: Page, cell: Locator, needle: string, text: string): Promise<void> {
  await cell.locator('.cm-line', { hasText: needle }).first().click();
  await page.keyboard.press('End');
  await page.keyboard.press('Shift+Home');
  await page.keyboard.type(text);
}

describe('stepwell cell in the browser', () => {
  it('inserts, edits, steps, saves, reloads, verifies and stays responsive', async () => {
    const page = browser.page;
    await openNotebook(page, app.url);
    const cells = page.locator('.jp-NotebookPanel:not(.lm-mod-hidden) .jp-Notebook .jp-Cell');
    // The demo opens where it was left, from its ledger: no engine needed to show step and trace.
    const demoCell = page.locator('.sw-CellWidget').first();
    await demoCell.waitFor();
    // The ledger is checked in a worker first ("reading the saved ledger…").
    await demoCell.locator('.sw-Status', { hasText: /^step \d+ · loss/ }).waitFor({ timeout: 30_000 });
    expect(await status(demoCell)).toMatch(/^step \d+ · loss/);
    // Its curvature readout shows why it diverged: λmax far above the step size's stability limit.
    await demoCell.locator('.sw-Tab[data-tab="curvature"]').click();
    await demoCell.locator('.sw-Button-curvature').click();
    // (The sharpness trace restored from the notebook has its own verdict line; wait for the measurement's.)
    await demoCell.locator('.sw-CurvatureHead', { hasText: 'At step 14: λmax' }).waitFor({ timeout: 60_000 });
    await demoCell.locator('.sw-Stability.sw-mod-unstable', { hasText: 'UNSTABLE on the local quadratic model' }).waitFor({ timeout: 30_000 });
    await demoCell.locator('.sw-Progress').waitFor({ state: 'hidden', timeout: 30_000 });
    expect(await demoCell.locator('.sw-CurvaturePlot .scatterlayer .trace').count()).toBeGreaterThan(0);
    await demoCell.locator('.sw-CurvatureHead').scrollIntoViewIfNeeded();
    await screenshot(page, 'stepwell-0-demo-curvature');
    // Journey 1: back to step 0 (the later steps are kept), step again tracking λmax, and see where it crosses the 2/η line.
    await demoCell.locator('.sw-Button-rewind').click();
    await demoCell.locator('.sw-Form input').fill('0');
    await demoCell.locator('.sw-Form button', { hasText: 'Go' }).click();
    await waitForStep(demoCell, 0);
    expect(await status(demoCell)).toMatch(/^step 0 \(of 14\) · /);
    // The curvature measured at step 20 stays, and says it belongs to another step.
    await demoCell.locator('.sw-Stale', { hasText: 'Measured at step 14; the branch is now at step 0.' }).waitFor({ timeout: 10_000 });
    await demoCell.locator('.sw-StepN').fill('20');
    // The tracking button follows the box's N.
    await demoCell.locator('.sw-Button-track', { hasText: 'Step ×20 tracking λmax' }).waitFor({ timeout: 5_000 });
    await demoCell.locator('.sw-Button-track').click();
    // Tracking re-steps through the 14 kept steps, then on to step 20.
    await waitForStep(demoCell, 20);
    await demoCell.locator('.sw-Progress').waitFor({ state: 'hidden', timeout: 60_000 });
    const crossing = demoCell.locator('.sw-Stability', { hasText: 'crossed the stability limit at step 0' });
    await crossing.waitFor({ timeout: 60_000 });
    expect(await demoCell.locator('.sw-SharpnessPlot .scatterlayer .trace').count()).toBeGreaterThan(1);
    await crossing.scrollIntoViewIfNeeded();
    await screenshot(page, 'stepwell-0b-demo-sharpness');
    await demoCell.locator('.sw-StepN').fill('');

    // Insert a new stepwell cell below the first (markdown) cell, as a user would.
    await cells.first().click();
    await page.keyboard.press('Escape');
    await runPaletteCommand(page, 'Insert Stepwell Cell');
    const cell = cells.nth(1);
    const widget = cell.locator('.sw-CellWidget');
    await widget.waitFor({ timeout: 30_000 });
    await waitForStep(cell, 0);
    await screenshot(page, 'stepwell-1-inserted');

    // Break the spec: the problem shows under the editor with the line number of the edit.
    const source = await cell.locator('.cm-content').innerText();
    const lrLine = source.split('\n').findIndex(l => /^\s*lr:/.test(l)) + 1;
    expect(lrLine).toBeGreaterThan(0);
    await retypeLine(page, cell, 'lr:', 'lr: -3');
    const problem = cell.locator('.sw-Problem', { hasText: `line ${lrLine}` });
    await problem.waitFor({ timeout: 10_000 });
    expect(await problem.innerText()).toMatch(/lr/);
    // The editor marks the same line.
    const marked = cell.locator('.cm-line.sw-mod-problemLine');
    await marked.waitFor({ timeout: 10_000 });
    expect(await marked.innerText()).toContain('lr: -3');
    // The notice says what works (no Reset while the text has problems) and the status that it shows the previous text's session.
    await cell.locator('.sw-Notice', { hasText: 'fix them, then run the cell (Shift+Enter)' }).waitFor({ timeout: 10_000 });
    expect(await cell.locator('.sw-Notice').innerText()).not.toContain('Reset');
    expect(await status(cell)).toContain('previous spec');
    expect(await cell.locator('.sw-Button-reset').isDisabled()).toBe(true);
    await cell.locator('.sw-Problem').first().scrollIntoViewIfNeeded();
    await screenshot(page, 'stepwell-2-spec-error');
    expect(await cell.locator('.sw-Button-step').isDisabled()).toBe(true);

    // Fix it and run the cell: the engine starts a session from the edited text.
    await retypeLine(page, cell, 'lr:', 'lr: 0.05');
    await cell.locator('.sw-Problems').waitFor({ state: 'hidden', timeout: 10_000 });
    expect(await cell.locator('.cm-line.sw-mod-problemLine').count()).toBe(0);
    await page.keyboard.press('Control+Enter');
    await cell.locator('.sw-Status', { hasText: 'η=0.05' }).waitFor({ timeout: 30_000 });
    await waitForStep(cell, 0);

    // A bad N is refused with a message that names it.
    await cell.locator('.sw-StepN').fill('2.5');
    await cell.locator('.sw-Button-stepN').click();
    await cell.locator('.sw-Notice', { hasText: 'N must be a whole number, got 2.5' }).waitFor({ timeout: 5_000 });
    await cell.locator('.sw-StepN').fill('');

    // Step ×N with the default N (10): status and trace update.
    await cell.locator('.sw-Button-stepN').click();
    await waitForStep(cell, 10);
    await cell.locator('.sw-TracePlot .scatterlayer .trace').first().waitFor({ timeout: 10_000 });
    const points = await cell.locator('.sw-TracePlot .scatterlayer .trace .point').count();
    expect(points).toBe(11);
    const before = await status(cell);
    // The timing shows only when the 10 updates took long enough to measure (≥ 1 ms).
    expect(before).toMatch(/^step 10 · loss [\d.e-]+ · (.* (ms|µs)\/step · )?ledger [\d.]+ kB · sgd η=0\.05/);
    await widget.scrollIntoViewIfNeeded();
    await screenshot(page, 'stepwell-3-stepped');

    // Save, reload: the cell comes back at step 10 with its trace, from the notebook alone.
    await page.keyboard.press('Escape');
    await page.keyboard.press('Control+s');
    await page.locator('.jp-mod-dirty').waitFor({ state: 'detached', timeout: 20_000 }).catch(() => undefined);
    await page.waitForTimeout(1000);
    await openNotebook(page, app.url);
    const again = cells.nth(1);
    await again.locator('.sw-CellWidget').waitFor({ timeout: 30_000 });
    await waitForStep(again, 10);
    await again.locator('.sw-TracePlot .scatterlayer .trace .point').nth(10).waitFor({ timeout: 10_000 });
    expect(await again.locator('.cm-content').innerText()).toContain('lr: 0.05');

    // Verify replays from the seed in the worker.
    await again.locator('.sw-Button-verify').click();
    const verdict = again.locator('.sw-Notice', { hasText: 'bit-identical' });
    await verdict.waitFor({ timeout: 30_000 });
    expect(await verdict.innerText()).toContain('Replayed 10 steps from the seed: bit-identical');
    await again.locator('.sw-CellWidget').scrollIntoViewIfNeeded();
    await screenshot(page, 'stepwell-4-reloaded-verified');

    // A long run must leave the main thread free: a page timer keeps firing while the worker steps.
    await page.evaluate(() => {
      const w = window as unknown as { swTicks: number[]; swTimer: number };
      w.swTicks = [];
      w.swTimer = window.setInterval(() => w.swTicks.push(performance.now()), 20);
    });
    await again.locator('.sw-StepN').fill('10000000');
    await again.locator('.sw-Button-stepN').click();
    await again.locator('.sw-Progress').waitFor({ state: 'visible', timeout: 10_000 });
    await again.locator('.sw-Progress').scrollIntoViewIfNeeded();
    await page.waitForTimeout(3000);
    expect(await again.locator('.sw-Progress').isVisible()).toBe(true);
    await screenshot(page, 'stepwell-5-long-run');
    // Judge the run itself: the one-off save and redraw after Stop is not part of it.
    const stopAt = await page.evaluate(() => performance.now());
    await again.locator('.sw-Button-stop').click();
    await again.locator('.sw-Notice', { hasText: 'Stopped at step' }).waitFor({ timeout: 30_000 });
    const ticks = await page.evaluate(until => {
      const w = window as unknown as { swTicks: number[]; swTimer: number };
      window.clearInterval(w.swTimer);
      return w.swTicks.filter(t => t <= until);
    }, stopAt);
    const span = ticks[ticks.length - 1] - ticks[0];
    let worstGap = 0;
    for (let i = 1; i < ticks.length; i++) worstGap = Math.max(worstGap, ticks[i] - ticks[i - 1]);
    // The engine runs in a worker: the page's 20 ms timer keeps firing through a multi-second run.
    // Lenient bounds (machines running this are often busy): at least half the expected ticks, and no
    // single stall of half a second (a main-thread loop would stall for the whole run).
    expect(span).toBeGreaterThan(2500);
    expect(ticks.length).toBeGreaterThan(0.5 * (span / 20));
    expect(worstGap).toBeLessThan(500);
    const stopped = await status(again);
    const step = Number(/^step (\d+)/.exec(stopped)?.[1]);
    expect(step).toBeGreaterThan(10);
    expect(step).toBeLessThan(10_000_010);
    await again.locator('.sw-CellWidget').scrollIntoViewIfNeeded();
    await screenshot(page, 'stepwell-6-stopped');

    expect(ourErrors(browser)).toEqual([]);
  });

  it('walks the second demo: both branches restored and replayed, the fix branch re-stepped through kept steps, later steps discarded', async () => {
    const page = browser.page;
    await openNotebook(page, app.url.replace('greenhouse-humidity-sensor', 'parcel-sorter-plateau'));
    const cells = page.locator('.jp-NotebookPanel:not(.lm-mod-hidden) .jp-Notebook .jp-Cell');
    // The plateau branch (after the intro and the Python cell that loads the magic) opens at step
    // 100 from its ledger; Verify replays both branches bit for bit.
    const sorter = cells.nth(2);
    await sorter.locator('.sw-CellWidget').waitFor({ timeout: 30_000 });
    await waitForStep(sorter, 100);
    await sorter.locator('.sw-Button-verify').click();
    const verdict = sorter.locator('.sw-Notice', { hasText: 'Branch init=lecun-normal,gain=1: replayed 100 steps from the seed: bit-identical' });
    await verdict.waitFor({ timeout: 60_000 });
    expect(await verdict.innerText()).toContain('Branch main: replayed 100 steps from the seed: bit-identical');
    // The decision record the product wrote sits right below, with its figure.
    const record = cells.nth(3);
    expect(await record.innerText()).toContain('Decision record');
    expect(await page.locator('.jp-Notebook').count()).toBeGreaterThan(0);

    // Show the fix branch, go back to step 7 (kept steps stay), step through kept steps, then discard the rest.
    await sorter.locator('.sw-Branch[data-branch="init=lecun-normal,gain=1"]').click();
    await sorter.locator('.sw-Status', { hasText: 'branch init=lecun-normal,gain=1' }).waitFor({ timeout: 30_000 });
    await sorter.locator('.sw-Button-rewind').click();
    await sorter.locator('.sw-Form input').fill('7');
    await sorter.locator('.sw-Form button', { hasText: 'Go' }).click();
    await sorter.locator('.sw-Status', { hasText: /^step 7 \(of 100\) · / }).waitFor({ timeout: 60_000 });
    await sorter.locator('.sw-StepN').fill('3');
    await sorter.locator('.sw-Button-stepN').click();
    await sorter.locator('.sw-Status', { hasText: /^step 10 \(of 100\) · / }).waitFor({ timeout: 60_000 });
    await sorter.locator('.sw-Button-discard').click();
    await sorter.locator('.sw-Confirm', { hasText: 'Discard steps 11–100 of init=lecun-normal,gain=1?' }).waitFor({ timeout: 10_000 });
    await sorter.locator('.sw-Confirm').scrollIntoViewIfNeeded();
    await screenshot(page, 'stepwell-7-discard-confirm');
    await sorter.locator('.sw-Button-confirm').click();
    await sorter.locator('.sw-Notice', { hasText: 'Dropped 90 kept steps' }).waitFor({ timeout: 30_000 });
    expect(await status(sorter)).not.toMatch(/\(of/);
    await sorter.locator('.sw-Button-verify').click();
    await sorter.locator('.sw-Notice', { hasText: 'Branch init=lecun-normal,gain=1: replayed 10 steps from the seed: bit-identical' }).waitFor({ timeout: 30_000 });
    await sorter.locator('.sw-Tab[data-tab="layers"]').click();
    expect(await sorter.locator('.sw-Layers > table.sw-Table tbody tr').count()).toBe(4);
    await sorter.locator('.sw-CellWidget').scrollIntoViewIfNeeded();
    await screenshot(page, 'stepwell-8-second-demo');
    expect(ourErrors(browser)).toEqual([]);
  });
});
