/**
 * Markup payloads in every string that reaches the page (headless Chromium, the embedded app).
 * Each payload of `test/markup-payloads.ts` goes into: the spec's comments, spec values and keys
 * the errors quote, a CSV file's column names (quoted by the engine's error), a branch name and its
 * patch, a decision record's question, and a stored ledger's strings (a branch name, the engine
 * name). Nothing may execute (`window.__pwned` stays unset, no dialog opens), nothing may be
 * injected (no `<script>`, `<iframe>`, `<object>`, `<embed>` or on* attribute appears in the
 * notebook), no request may leave the app's origin (the harness's network monitor), and where the
 * text is shown it is shown literally. Then the saved notebook's static report
 * (`stepwell report NOTEBOOK --out FILE.html`) must carry every payload escaped.
 */
import * as fs from 'fs';
import * as os from 'os';
import * as path from 'path';
import type { Locator, Page } from 'playwright-core';
import { parseSpec } from '../../src/experiment';
import { MARKUP_PAYLOADS } from '../markup-payloads';
import { ensureBuilt, launchBrowser, openNotebook, ourErrors, ROOT, screenshot, startApp, stepwell, type IAppServer, type IBrowserSession } from './harness';

jest.setTimeout(600_000);

let app: IAppServer;
let browser: IBrowserSession;
const dialogs: string[] = [];

beforeAll(async () => {
  ensureBuilt();
  app = await startApp();
  browser = await launchBrowser();
  browser.page.on('dialog', d => {
    dialogs.push(`${d.type()}: ${d.message()}`);
    void d.dismiss();
  });
});

afterAll(async () => {
  await browser?.close();
  await app?.stop();
});

afterEach(() => {
  expect(ourErrors(browser)).toEqual([]);
});

const P = MARKUP_PAYLOADS.map(p => p.text);
const q = (s: string): string => JSON.stringify(s);
const comments = P.map(p => `# ${p}`).join('\n');

/** A spec of our own (invented rows) whose values and keys carry payloads: every one an error that quotes it. */
const BAD_SPEC = `%%stepwell
# stepwell: payloads in the values
${comments}
seed: 3
model:
  inputs: 2
  layers:
    - { units: 3, activation: ${q(P[1])} }
    - { units: 1 }
  ${q(P[8])}: 1
data:
  x: [[0, 1], [1, 0], [1, 1], [0, 0]]
  y: [0, 1, 1, 0]
  ${q(P[2])}: 1
loss: ${q(P[3])}
recipe: { optimizer: ${q(P[4])}, lr: ${q(P[5])}, schedule: ${q(P[6])}, ${q(P[7])}: 2 }
`;

/** The CSV's header is all payloads; the spec names a column the file lacks, so the error lists them. */
const CSV = `${P.slice(0, 4).map(p => `"${p.replace(/"/g, '""')}"`).join(',')}\n0,1,2,3\n1,2,3,4\n`;
const CSV_SPEC = `%%stepwell
# stepwell: column names from a file
${comments}
seed: 3
model:
  inputs: 1
  layers:
    - { units: 1 }
data:
  file: payload-columns.csv
  features: [no_such_column]
  target: ${q(P[0])}
loss: mse
recipe: { optimizer: sgd, lr: 0.05 }
`;

/** A valid spec with payloads in its comments. */
const GOOD_SPEC = `%%stepwell
# stepwell: payloads only in comments
${comments}
seed: 3
model:
  inputs: 2
  layers:
    - { units: 3, activation: tanh }
    - { units: 1 }
data:
  x: [[0, 1], [1, 0], [1, 1], [0, 0]]
  y: [0, 1, 1, 0]
loss: mse
recipe: { optimizer: sgd, lr: 0.05 }
`;

type App = { serviceManager: { contents: { save(p: string, o: object): Promise<unknown>; get(p: string, o: object): Promise<{ content: unknown }> } }; commands: { execute(id: string, args?: object): Promise<unknown> } };

/** Everything the page holds that would betray an injection, counted over the whole document. */
async function injected(page: Page): Promise<{ pwned: unknown; scripts: string[]; frames: number; handlers: string[] }> {
  return page.evaluate(() => {
    const w = window as unknown as { __pwned?: unknown };
    const handlers: string[] = [];
    for (const e of document.querySelectorAll('*')) {
      for (const a of e.getAttributeNames()) {
        const v = e.getAttribute(a) ?? '';
        if (/^on/i.test(a) || /^\s*javascript:/i.test(v)) handlers.push(`<${e.tagName.toLowerCase()} ${a}="${v.slice(0, 60)}">`);
      }
    }
    const scripts = [...document.querySelectorAll('script')].map(s => s.src || (s.textContent ?? '').slice(0, 60)).filter(t => /pwned/.test(t));
    return { pwned: w.__pwned, scripts, frames: document.querySelectorAll('iframe, object, embed').length, handlers };
  });
}

/** Selector of the notebook on screen (other tabs stay in the DOM). */
let SHOWN = '.jp-Notebook';

async function followShown(page: Page, file: string): Promise<void> {
  const handle = await page.waitForFunction(f => {
    const w = (window as unknown as { jupyterapp: { shell: { currentWidget: { id: string; context?: { path: string } } | null } } }).jupyterapp.shell.currentWidget;
    return w?.context?.path === f ? w.id : null;
  }, file, { timeout: 60_000 });
  SHOWN = `[id="${String(await handle.jsonValue())}"] .jp-Notebook`;
}

async function cellAt(page: Page, i: number): Promise<Locator> {
  const cell = page.locator(`${SHOWN} .jp-Cell`).nth(i);
  await cell.scrollIntoViewIfNeeded();
  return cell;
}

async function runCell(page: Page, i: number): Promise<Locator> {
  const cell = await cellAt(page, i);
  await cell.locator('.jp-InputPrompt').click();
  await page.keyboard.press('Shift+Enter');
  return cell;
}

describe('markup payloads in every string that reaches the page', () => {
  it('execute nothing, inject nothing, request nothing, and are shown literally', async () => {
    const page = browser.page;
    await openNotebook(page, app.url);
    const demo = JSON.parse(fs.readFileSync(path.join(ROOT, 'demo-notebooks/greenhouse-humidity-sensor.ipynb'), 'utf8')) as { cells: { source: string | string[]; metadata: Record<string, unknown> }[] };
    const stored = demo.cells.find(c => c.metadata.stepwell !== undefined) as { source: string | string[]; metadata: { stepwell: { engine: string; branches: { name: string; parent?: { branch: string } }[]; activeBranch?: string } } };
    // The second branch renamed to a payload everywhere the ledger names it (names are not hashed), and the engine's name.
    const child = stored.metadata.stepwell.branches[1].name;
    const ledger = JSON.parse(JSON.stringify(stored.metadata.stepwell).split(JSON.stringify(child)).join(JSON.stringify(P[0]))) as typeof stored.metadata.stepwell;
    expect(ledger.branches[1].name).toBe(P[0]);
    ledger.engine = P[3];
    const nb = {
      nbformat: 4,
      nbformat_minor: 5,
      metadata: { kernelspec: { name: 'python3', display_name: 'Python 3', language: 'python' }, language_info: { name: 'python' } },
      cells: [
        { cell_type: 'markdown', id: 'intro', metadata: {}, source: 'Hostile strings, each cell below.' },
        { cell_type: 'code', id: 'bad', metadata: {}, source: BAD_SPEC, outputs: [], execution_count: null },
        { cell_type: 'code', id: 'csv', metadata: {}, source: CSV_SPEC, outputs: [], execution_count: null },
        { cell_type: 'code', id: 'good', metadata: {}, source: GOOD_SPEC, outputs: [], execution_count: null },
        { cell_type: 'code', id: 'ledger', metadata: { stepwell: ledger }, source: stored.source, outputs: [], execution_count: null }
      ]
    };
    await page.evaluate(async ([content, csv]) => {
      const jl = (window as unknown as { jupyterapp: App }).jupyterapp;
      await jl.serviceManager.contents.save('payload-columns.csv', { type: 'file', format: 'text', content: csv });
      await jl.serviceManager.contents.save('payloads.ipynb', { type: 'notebook', format: 'json', content });
    }, [nb, CSV] as const);
    await openNotebook(page, `${app.origin}/lab/tree/payloads.ipynb`);
    await followShown(page, 'payloads.ipynb');
    await page.locator(`${SHOWN} .jp-Cell`).nth(4).waitFor({ timeout: 60_000 });
    let shownPlaces = 0;

    // 1. Spec values and keys: the live check's errors quote them, shown as text in the cell.
    const expected = parseSpec(BAD_SPEC, 'auto', { deferFiles: true });
    expect(expected.ok).toBe(false);
    const messages = expected.ok ? [] : expected.errors.map(e => e.message);
    expect(messages.length).toBe(8);
    const bad = await runCell(page, 1);
    const problems = bad.locator('.sw-CellWidget .sw-Problems');
    await problems.locator('.sw-Problem').nth(messages.length - 1).waitFor({ timeout: 60_000 });
    const shownProblems = (await problems.textContent()) ?? '';
    for (const m of messages) expect(shownProblems).toContain(m);
    shownPlaces += messages.length;
    await screenshot(page, 'payloads-1-spec-errors');

    // 2. A data file's column names, quoted by the engine's error at its key.
    const csv = await runCell(page, 2);
    const csvProblem = csv.locator('.sw-CellWidget .sw-Problem', { hasText: 'no_such_column' });
    await csvProblem.waitFor({ timeout: 60_000 });
    const csvText = (await csvProblem.textContent()) ?? '';
    console.log(`payloads: the CSV column error reads: ${csvText.slice(0, 300)}`);
    expect(csvText).toContain(P[0]);
    shownPlaces++;
    await screenshot(page, 'payloads-2-csv-columns');

    // 3. A valid spec (payloads in its comments): run, branch with a payload name and patch comment, record a decision.
    const good = await runCell(page, 3);
    const widget = good.locator('.sw-CellWidget');
    await widget.locator('.sw-Status', { hasText: /^step 0 · / }).waitFor({ timeout: 60_000 });
    await widget.locator('.sw-Button-step').click();
    await widget.locator('.sw-Status', { hasText: /^step \d+ · / }).waitFor({ timeout: 60_000 });
    // Branch names have at most 40 characters: a short payload of the same kinds.
    const branchName = '"><img src=x onerror=alert(7)>%{x}';
    await widget.locator('.sw-Button-branch').click();
    const form = widget.locator('.sw-BranchForm');
    await form.locator('.sw-PatchText').fill(`# ${P[1]}\nlr: 0.02\n`);
    await form.locator('.sw-BranchName-input').fill(branchName);
    await form.locator('.sw-Button-make').click();
    await widget.locator('.sw-Notice', { hasText: 'made at step' }).waitFor({ timeout: 30_000 }).catch(async (e: unknown) => {
      await screenshot(page, 'payloads-3-branch-failed');
      console.log(`payloads: branch notice: ${await widget.locator('.sw-Notice').textContent().catch(() => '')} | form: ${await form.textContent().catch(() => '')}`);
      throw e;
    });
    expect(await widget.locator('.sw-Notice').textContent()).toContain(`Branch ${branchName} made at step`);
    expect(await widget.locator('.sw-Branch').nth(1).getAttribute('data-branch')).toBe(branchName);
    expect(await widget.locator('.sw-Branch').nth(1).textContent()).toContain(branchName);
    shownPlaces += 2;
    // The compare tab draws the branches (their names in the legend and hover text), and holds the record button.
    await widget.locator('.sw-Button-step').click();
    await widget.locator('.sw-Status', { hasText: /^step \d+ · .* · branch / }).waitFor({ timeout: 60_000 });
    await widget.locator('.sw-Tab[data-tab="compare"]').click();
    await widget.locator('.sw-ComparePlot').first().locator('.scatterlayer .trace').first().waitFor({ timeout: 30_000 });
    const legend = (await widget.locator('.sw-ComparePlot').first().locator('.legend').textContent().catch(() => '')) ?? '';
    console.log(`payloads: the compare legend reads: ${legend.slice(0, 200)}`);
    await widget.locator('.sw-Button-record').click();
    const rec = widget.locator('.sw-RecordForm');
    const question = `${P[0]} ${P[1]} ${P[2]} ${P[5]} ${P[8]}`;
    await rec.locator('.sw-RecordQuestion').fill(question);
    await rec.locator('.sw-RecordChoice').selectOption({ value: branchName });
    await rec.locator('.sw-Button-writeRecord').click();
    await widget.locator('.sw-Notice', { hasText: 'Decision record written below the cell' }).waitFor({ timeout: 30_000 });
    const record = page.locator(`${SHOWN} .jp-MarkdownCell`).filter({ hasText: 'Decision record' }).first();
    await record.locator('.jp-MarkdownOutput h2').waitFor({ timeout: 20_000 });
    const heading = (await record.locator('.jp-MarkdownOutput h2').textContent()) ?? '';
    console.log(`payloads: the decision record's heading reads: ${heading.slice(0, 300)}`);
    expect(heading).toContain(P[0]);
    expect(heading).toContain(P[1]);
    expect(heading).toContain(P[8]);
    shownPlaces++;
    await record.scrollIntoViewIfNeeded();
    await screenshot(page, 'payloads-3-branch-and-record');

    // 4. A stored ledger whose strings carry payloads (a branch name, the engine name).
    // A readable ledger in a cell without output shows its session once run (Shift+Enter continues it).
    const stored4 = await runCell(page, 5);
    const w4 = stored4.locator('.sw-CellWidget');
    await w4.waitFor({ timeout: 60_000 });
    await w4.locator('.sw-Status').waitFor({ timeout: 60_000 });
    const status4 = (await w4.locator('.sw-Status').textContent()) ?? '';
    const notice4 = (await w4.locator('.sw-Notice').textContent().catch(() => '')) ?? '';
    console.log(`payloads: the ledger cell shows: ${status4.slice(0, 200)} | ${notice4.slice(0, 300)}`);
    const branches4 = await w4.locator('.sw-Branch').evaluateAll(els => els.map(e => e.getAttribute('data-branch')));
    if (branches4.length > 0) {
      expect(branches4).toContain(P[0]);
      shownPlaces++;
    } else {
      expect(notice4).toContain('cannot be read');
    }
    await screenshot(page, 'payloads-4-ledger');

    // Nothing ran, nothing was injected, no dialog opened; hover over every plot to try the hover templates.
    for (const plot of await page.locator(`${SHOWN} .js-plotly-plot`).all()) await plot.hover().catch(() => undefined);
    const found = await injected(page);
    expect(found).toEqual({ pwned: undefined, scripts: [], frames: 0, handlers: [] });
    expect(dialogs).toEqual([]);
    console.log(`payloads: ${P.length} payloads × ${shownPlaces} places shown literally (plus comments of 3 specs, a CSV header, a ledger); nothing executed`);

    // The static report of the saved notebook carries every payload escaped.
    await page.evaluate(() => (window as unknown as { jupyterapp: App }).jupyterapp.commands.execute('docmanager:save'));
    const saved = await page.evaluate(async () => (await (window as unknown as { jupyterapp: App }).jupyterapp.serviceManager.contents.get('payloads.ipynb', { content: true })).content);
    const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'stepwell-payloads-'));
    const file = path.join(dir, 'payloads.ipynb');
    fs.writeFileSync(file, JSON.stringify(saved));
    const html = path.join(dir, 'report.html');
    const r = stepwell('report', file, '--out', html);
    console.log(`payloads: stepwell report --out .html exit ${r.code} ${r.err.slice(0, 300)}`);
    const text = fs.existsSync(html) ? fs.readFileSync(html, 'utf8') : r.out;
    expect(text.length).toBeGreaterThan(1000);
    for (const p of P) {
      if (!/[<>"&]/.test(p)) continue;
      expect(text).not.toContain(p);
    }
    // Escaped payloads keep their words (`onerror=` after `&lt;img`), never a tag of their own.
    expect(text).not.toMatch(/<script>window|<iframe|<svg onload|<img src=x|<b onmouseover|<a href="javascript|<link rel=stylesheet/i);
    const escapedSeen = P.filter(p => /</.test(p)).filter(p => text.includes(p.slice(0, 12).replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;'))).length;
    console.log(`payloads: the HTML report holds ${escapedSeen} of the markup payloads, escaped`);
    expect(escapedSeen).toBeGreaterThan(0);
    fs.rmSync(dir, { recursive: true, force: true });
  });
});
