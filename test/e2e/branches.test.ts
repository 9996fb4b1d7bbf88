/**
 * Journey 1 as far as it exists without findings, in the real app in headless Chromium: open the
 * greenhouse demo (its curvature and sharpness come back from the notebook without recomputing),
 * move around the branch bar and the readout tabs with the keyboard, make a branch from an
 * earlier step with a smaller learning rate through the branch form (a bad patch shows its line
 * first), step it, see the overlay and the numbers at matched steps, write the decision record
 * (replacing the demo's, after the question), save, and read the saved notebook through the
 * app's contents API: the record cell holds the figure as an attachment and the fingerprints, and
 * no other cell changed. Light and dark screenshots go to test-output/.
 */
import * as fs from 'fs';
import * as path from 'path';
import type { Locator, Page } from 'playwright-core';
import { ensureBuilt, executeCommand, launchBrowser, openNotebook, ourErrors, ROOT, screenshot, startApp, type IAppServer, type IBrowserSession } from './harness';

jest.setTimeout(420_000);

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

const DEMO = 'greenhouse-humidity-sensor.ipynb';

interface NbCell {
  cell_type: string;
  id: string;
  source: string | string[];
  metadata: Record<string, unknown>;
  outputs?: unknown[];
  attachments?: Record<string, Record<string, string>>;
}

const text = (s: string | string[]): string => (Array.isArray(s) ? s.join('') : s);

/** A cell as nbformat means it (source as one string, absent attachments as none). */
const normal = (c: NbCell) => ({ cell_type: c.cell_type, id: c.id, metadata: c.metadata, source: text(c.source), outputs: c.outputs ?? null, attachments: c.attachments ?? null });

/** The saved notebook as the app's contents service returns it. */
async function savedNotebook(page: Page): Promise<{ cells: NbCell[]; metadata: unknown; nbformat: number }> {
  return page.evaluate(async p => {
    const app = (window as unknown as { jupyterapp: { serviceManager: { contents: { get(path: string, o: object): Promise<{ content: unknown }> } } } }).jupyterapp;
    return (await app.serviceManager.contents.get(p, { content: true })).content as never;
  }, DEMO);
}

async function waitForStatus(cell: Locator, pattern: RegExp, timeout = 60_000): Promise<void> {
  await cell.locator('.sw-Status', { hasText: pattern }).waitFor({ timeout });
}

describe('branches and the decision record in the browser (journey 1)', () => {
  it('branches from an earlier step, compares, records the decision, and saves only what changed', async () => {
    const page = browser.page;
    const original = JSON.parse(fs.readFileSync(path.join(ROOT, 'demo-notebooks', DEMO), 'utf8')) as { cells: NbCell[]; metadata: unknown; nbformat: number };
    // intro, the Python cell that loads the magic, the stepwell cell, its decision record, the diagnosis
    expect(original.cells.map(c => c.cell_type)).toEqual(['markdown', 'code', 'code', 'markdown', 'markdown']);
    await openNotebook(page, app.url);
    const cell = page.locator('.sw-CellWidget').first();
    await cell.waitFor();
    await waitForStatus(cell, /^step 14 · /);
    const items = cell.locator('.sw-Branch');
    expect(await items.count()).toBe(2);
    expect(await items.nth(0).getAttribute('aria-selected')).toBe('true');
    const fixName = (await items.nth(1).getAttribute('data-branch')) as string;
    expect(fixName).toMatch(/^lr=/);

    // The sharpness trace and its crossing come back from the notebook, without recomputing.
    await cell.locator('.sw-Tab[data-tab="curvature"]').click();
    await cell.locator('.sw-Stability', { hasText: 'crossed the stability limit at step 0' }).waitFor({ timeout: 15_000 });
    expect(await cell.locator('.sw-SharpnessPlot .scatterlayer .trace').count()).toBeGreaterThan(1);
    expect(await cell.locator('.sw-Progress').isVisible()).toBe(false);

    // Keyboard: arrows move along the readout tabs and the branch bar; Enter shows a branch.
    await cell.locator('.sw-Tab[data-tab="curvature"]').focus();
    await page.keyboard.press('ArrowLeft');
    expect(await cell.locator('.sw-Tab[data-tab="trace"]').getAttribute('aria-selected')).toBe('true');
    await page.keyboard.press('End');
    expect(await cell.locator('.sw-Tab[data-tab="compare"]').getAttribute('aria-selected')).toBe('true');
    await items.nth(0).focus();
    await page.keyboard.press('ArrowRight');
    await page.keyboard.press('Enter');
    await waitForStatus(cell, new RegExp(`branch ${fixName.replace(/[.]/g, '\\.')}`));
    await cell.locator('.sw-Branch').nth(1).focus();
    await page.keyboard.press('ArrowLeft');
    await page.keyboard.press('Enter');
    await waitForStatus(cell, /^step 14 · .* · branch main ·/);

    // The branch form: a bad value is shown at its line before anything is made.
    await cell.locator('.sw-Button-branch').click();
    const form = cell.locator('.sw-BranchForm');
    await form.locator('.sw-PatchText').fill('# try a smaller step\nlr: -0.3\n');
    await form.locator('.sw-Problem', { hasText: "line 2:1 (lr): patch 'lr'" }).waitFor({ timeout: 10_000 });
    await form.scrollIntoViewIfNeeded();
    await screenshot(page, 'branches-1-form-error');
    await form.locator('.sw-PatchText').fill('# try a smaller step\nlr: 0.3\n');
    await form.locator('.sw-BranchStep').fill('5');
    await form.locator('.sw-BranchName-input').fill('slower');
    await form.locator('.sw-Button-make').click();
    await cell.locator('.sw-Notice', { hasText: 'Branch slower made at step 5' }).waitFor({ timeout: 30_000 });
    await cell.locator('.sw-StepN').fill('15');
    await cell.locator('.sw-Button-stepN').click();
    await waitForStatus(cell, /^step 20 · .* · branch slower ·/);
    expect(await cell.locator('.sw-Branch').count()).toBe(3);
    // Alt+Shift+S steps the box's N too (15), not the settings' default.
    await cell.locator('.sw-Button-stepN').focus();
    await page.keyboard.press('Escape');
    await page.keyboard.press('Alt+Shift+S');
    await waitForStatus(cell, /^step 35 · .* · branch slower ·/);
    await cell.locator('.sw-BranchBar').scrollIntoViewIfNeeded();
    await screenshot(page, 'branches-2-bar');

    // The overlay and the table at matched steps.
    await cell.locator('.sw-Tab[data-tab="compare"]').click();
    await cell.locator('.sw-ComparePlot').first().locator('.scatterlayer .trace').first().waitFor({ timeout: 30_000 });
    const checked = await cell.locator('.sw-CompareChoice input:checked').count();
    expect(checked).toBe(3);
    expect(await cell.locator('.sw-ComparePlot').first().getAttribute('aria-label')).toMatch(/^Training loss of 3 branches by step\./);
    expect(await cell.locator('.sw-MatchTable tbody tr').count()).toBeGreaterThanOrEqual(6);
    expect(await cell.locator('.sw-PatchKey', { hasText: 'lr' }).count()).toBe(2);
    await cell.locator('.sw-Compare').scrollIntoViewIfNeeded();
    await screenshot(page, 'branches-3-compare-light');

    // Switching tabs and resizing the window lays out only the displayed plots: no plotly errors.
    for (let round = 0; round < 3; round++) {
      for (const tab of ['trace', 'curvature', 'layers', 'compare']) await cell.locator(`.sw-Tab[data-tab="${tab}"]`).click();
      await page.setViewportSize({ width: 1200 + 100 * round, height: 900 });
      await page.waitForTimeout(300);
    }
    await page.setViewportSize({ width: 1400, height: 900 });
    expect(browser.pageErrors.map(e => e.message)).toEqual([]);

    // The decision record: a second one asks before replacing the demo's.
    await cell.locator('.sw-Button-record').click();
    const rec = cell.locator('.sw-RecordForm');
    expect(await rec.locator('.sw-RecordQuestion').inputValue()).toMatch(/^Which lr should the full-scale run use\?$/);
    await rec.locator('.sw-RecordQuestion').fill('Which step size keeps the calibration stable?');
    await rec.locator('.sw-RecordChoice').selectOption('slower');
    await rec.locator('.sw-Button-writeRecord').click();
    await cell.locator('.sw-Confirm', { hasText: 'already has a decision record' }).waitFor({ timeout: 30_000 });
    await cell.locator('.sw-Button-confirm').click();
    await cell.locator('.sw-Notice', { hasText: 'Decision record written below the cell (chosen: slower)' }).waitFor({ timeout: 30_000 });
    const recordCell = page.locator('.jp-MarkdownCell', { hasText: 'Which step size keeps the calibration stable?' });
    // JupyterLab re-renders an edited markdown cell after a short quiet time: wait for the new text.
    await recordCell.locator('.jp-MarkdownOutput', { hasText: 'slower: sharpness not tracked.' }).waitFor({ timeout: 20_000 });
    await recordCell.locator('img').waitFor({ timeout: 20_000 });
    await page.waitForFunction(() => [...document.querySelectorAll('.jp-MarkdownCell img')].some(i => (i as HTMLImageElement).naturalWidth > 0));
    await recordCell.scrollIntoViewIfNeeded();
    await screenshot(page, 'branches-4-record');

    // Save and read the notebook back through the app's contents API.
    await page.keyboard.press('Escape');
    await page.keyboard.press('Control+s');
    await page.locator('.jp-mod-dirty').waitFor({ state: 'detached', timeout: 20_000 }).catch(() => undefined);
    await page.waitForTimeout(1000);
    const saved = await savedNotebook(page);
    expect(saved.cells).toHaveLength(original.cells.length);
    const ledger = saved.cells[2].metadata.stepwell as { branches: { name: string; head: { fingerprint: string; step: number } }[] };
    expect(ledger.branches.map(b => b.name)).toEqual(['main', fixName, 'slower']);
    const record = saved.cells[3];
    expect(record.cell_type).toBe('markdown');
    expect(record.id).toBe(original.cells[3].id);
    expect((record.metadata['stepwell-record'] as { chosen: string; cell: string }).chosen).toBe('slower');
    expect((record.metadata['stepwell-record'] as { chosen: string; cell: string }).cell).toBe(original.cells[2].id);
    const png = record.attachments?.['stepwell-comparison.png']?.['image/png'] ?? '';
    expect(png.startsWith('iVBORw0KGgo')).toBe(true);
    expect(png.length).toBeGreaterThan(10_000);
    const source = text(record.source);
    expect(source).toContain('](attachment:stepwell-comparison.png)');
    for (const b of ledger.branches) expect(source).toContain(`| ${b.name} | ${b.head.step} | \`${b.head.fingerprint}\` |`);
    // Nothing else changed: the other cells, the spec text and the notebook's metadata are as shipped.
    for (const i of [0, 1, 4]) expect(normal(saved.cells[i])).toEqual(normal(original.cells[i]));
    expect(text(saved.cells[2].source)).toBe(text(original.cells[2].source));
    expect(saved.metadata).toEqual(original.metadata);
    expect(saved.nbformat).toBe(original.nbformat);

    // Dark theme: the same views with the theme's colours.
    await executeCommand(page, 'apputils:change-theme', { theme: 'JupyterLab Dark' });
    await page.waitForFunction(() => document.body.dataset.jpThemeLight === 'false', undefined, { timeout: 20_000 });
    await page.waitForTimeout(1500);
    await cell.locator('.sw-Compare').scrollIntoViewIfNeeded();
    await screenshot(page, 'branches-5-compare-dark');
    await cell.locator('.sw-BranchBar').scrollIntoViewIfNeeded();
    await screenshot(page, 'branches-6-bar-dark');
    await recordCell.scrollIntoViewIfNeeded();
    await screenshot(page, 'branches-7-record-dark');
    await executeCommand(page, 'apputils:change-theme', { theme: 'JupyterLab Light' });

    expect(ourErrors(browser)).toEqual([]);
  });
});
