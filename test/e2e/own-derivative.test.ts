/**
 * Journey 3 in the browser ("my custom piece has a wrong derivative"): a stepwell cell whose hidden
 * layer uses the user's own activation with a derivative written 2% too large. A typo in the
 * formula is shown at its line and column; the gradient audit's table shows ~2e-2 relative errors
 * in that layer and ~1e-11 in the other; the step-size sweep stays above 1e-2 at every h (not
 * round-off); fixing the derivative by typing and running the cell again turns the row right.
 * Screenshots go to test-output/.
 */
import type { Locator, Page } from 'playwright-core';
import { ensureBuilt, launchBrowser, openNotebook, ourErrors, runPaletteCommand, screenshot, startApp, type IAppServer, type IBrowserSession } from './harness';

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

/** An invented fan-controller proxy whose hidden layer uses the user's own activation. */
const SPEC = `%%stepwell
# stepwell: fan controller proxy with a home-made activation
seed: 3
model:
  inputs: 2
  layers:
    - { units: 5, activation: { expr: "tanh(x)", derivative: "1.02 * (1 - tanh(x)^2)" } }
    - { units: 1 }
data:
  x: [[0.2, 1.0], [0.5, -0.3], [-0.8, 0.4], [1.2, 0.9], [-0.1, -1.1], [0.7, 0.2], [-0.6, -0.5], [0.9, -0.8]]
  y: [0.6, 0.1, -0.3, 1.1, -0.7, 0.4, -0.5, 0.0]
recipe: { optimizer: sgd, lr: 0.2 }
`;

/** Replaces the text of the editor line containing `needle` by typing, as a user would. */
async function retypeLine(page: Page, cell: Locator, needle: string, text: string): Promise<void> {
  await cell.locator('.cm-line', { hasText: needle }).first().click();
  await page.keyboard.press('End');
  await page.keyboard.press('Shift+Home');
  await page.keyboard.type(text);
}

/** Runs the audit and returns the table's rows as [name, checked, max, median, worst, verdict] with each row's class. */
async function audit(cell: Locator): Promise<{ cells: string[]; cls: string }[]> {
  await cell.locator('.sw-Tab[data-tab="audit"]').click();
  const button = cell.locator('.sw-Readout button', { hasText: /Run gradient audit|Run again/ });
  const before = await cell.locator('.sw-AuditTable').count();
  await button.click();
  if (before > 0) await cell.locator('.sw-AuditTable').waitFor({ state: 'detached', timeout: 30_000 }).catch(() => undefined);
  await cell.locator('.sw-AuditTable').waitFor({ timeout: 60_000 });
  const rows = cell.locator('.sw-AuditTable tbody tr');
  const out: { cells: string[]; cls: string }[] = [];
  for (let i = 0; i < (await rows.count()); i++) {
    out.push({ cells: await rows.nth(i).locator('td').allInnerTexts(), cls: (await rows.nth(i).getAttribute('class')) ?? '' });
  }
  return out;
}

describe('journey 3: a wrong derivative in the user\'s own activation', () => {
  it('is refused at its column when mistyped, shows in one layer of the audit, survives the sweep, and turns right when fixed', async () => {
    const page = browser.page;
    await openNotebook(page, app.url);
    const cells = page.locator('.jp-NotebookPanel:not(.lm-mod-hidden) .jp-Notebook .jp-Cell');
    await page.locator('.sw-CellWidget').first().waitFor();
    await cells.first().click();
    await page.keyboard.press('Escape');
    await runPaletteCommand(page, 'Insert Stepwell Cell');
    const cell = cells.nth(1);
    await cell.locator('.sw-CellWidget').waitFor({ timeout: 30_000 });
    // Paste the spec into the new cell (the active one).
    await page.evaluate((text) => {
      const app = (window as unknown as { jupyterapp: { shell: { currentWidget: { content: { activeCell: { model: { sharedModel: { setSource(s: string): void } } } } } } } }).jupyterapp;
      app.shell.currentWidget.content.activeCell.model.sharedModel.setSource(text);
    }, SPEC);
    await cell.locator('.cm-line', { hasText: 'derivative' }).waitFor();

    // A typo in the formula: the problem names the symbol at the line and column of the derivative's text.
    await retypeLine(page, cell, 'derivative', '- { units: 5, activation: { expr: "tanh(x)", derivative: "1.02 * (1 - tanh(z)^2)" } }');
    const problem = cell.locator('.sw-Problem', { hasText: "unknown symbol 'z'" });
    await problem.waitFor({ timeout: 10_000 });
    expect(await problem.innerText()).toMatch(/^line 7:80 \(model\.layers\[0\]\.activation\.derivative\)/);
    await problem.scrollIntoViewIfNeeded();
    await screenshot(page, 'journey3-0-typo');
    await retypeLine(page, cell, 'derivative', '- { units: 5, activation: { expr: "tanh(x)", derivative: "1.02 * (1 - tanh(x)^2)" } }');
    await cell.locator('.sw-Problems').waitFor({ state: 'hidden', timeout: 10_000 });

    // Run the cell and audit: layer 0 (the own activation) is wrong by 0.02/1.02, layer 1 right.
    await page.keyboard.press('Control+Enter');
    await cell.locator('.sw-Status', { hasText: 'η=0.2' }).waitFor({ timeout: 30_000 });
    const wrong = await audit(cell);
    expect(wrong.length).toBe(2);
    expect(wrong[0].cells[0]).toMatch(/^layer 0/);
    expect(wrong[0].cells[2]).toBe('1.96e-2'); // closed form 0.02/1.02 = 1.96e-2 (test/unit/model/expression.test.ts)
    expect(wrong[0].cells[5]).toBe('wrong');
    expect(wrong[0].cls).toContain('sw-Verdict-wrong');
    expect(wrong[1].cells[5]).toBe('right');
    expect(Number(wrong[1].cells[2])).toBeLessThan(1e-7); // source: CS231n notes (from memory): below 1e-7 right
    // The sweep: no step size brings the worst entries below 1e-2, so round-off does not explain it.
    const sweep = await cell.locator('.sw-SweepTable tbody tr').allInnerTexts();
    expect(sweep.length).toBe(9);
    for (const row of sweep) expect(Number(row.split('\t')[1])).toBeGreaterThan(1e-2);
    await cell.locator('.sw-AuditTable').scrollIntoViewIfNeeded();
    await screenshot(page, 'journey3-1-wrong-derivative');
    await cell.locator('.sw-SweepTable').scrollIntoViewIfNeeded();
    await screenshot(page, 'journey3-2-sweep');

    // Fix the formula by typing and run the cell again: a new session from the edited text.
    await retypeLine(page, cell, 'derivative', '- { units: 5, activation: { expr: "tanh(x)", derivative: "1 - tanh(x)^2" } }');
    await page.keyboard.press('Control+Enter');
    const confirm = cell.locator('.sw-Button-confirm');
    if (await confirm.isVisible().catch(() => false)) await confirm.click();
    await cell.locator('.sw-AuditTable').waitFor({ state: 'detached', timeout: 30_000 }).catch(() => undefined);
    const fixed = await audit(cell);
    expect(fixed.length).toBe(2);
    expect(fixed.map((r) => r.cells[5])).toEqual(['right', 'right']);
    expect(fixed[0].cls).toContain('sw-Verdict-right');
    await cell.locator('.sw-AuditTable').scrollIntoViewIfNeeded();
    await screenshot(page, 'journey3-3-fixed');
    expect(ourErrors(browser)).toEqual([]);
  });
});
