/**
 * Journey 4 ("here is my diagnosis — check it") end to end, in the embedded app in headless
 * Chromium and the command line in Node:
 *
 * 1. a demo cell is stepped further and branched in the browser and the notebook saved; the
 *    notebook is downloaded through the app's contents API and `stepwell verify` (a child
 *    process: the real command) replays every branch bit for bit — browser and Node agree;
 * 2. the saved output's markdown fallback carries the loss trace as an SVG image, which
 *    JupyterLab's own markdown renderer (the one a viewer without Stepwell uses) draws;
 * 3. `stepwell report` of that notebook, of the demos and of a notebook with data files opens
 *    with the network off (no request leaves the page) and shows every figure, its points drawn
 *    where its axis ticks say (read back from the rendered SVG and compared with the stored
 *    losses). Screenshots go to test-output/handoff-*.png.
 */
import * as fs from 'fs';
import * as path from 'path';
import { chromium, type Page } from 'playwright-core';
import { CHROMIUM, CHROMIUM_ARGS, ensureBuilt, launchBrowser, openNotebook, ourErrors, OUTPUT_DIR, ROOT, screenshot, startApp, type IAppServer, type IBrowserSession, stepwell } from './harness';
import { kilnNotebook, tempDir } from '../unit/cli/notebooks';

jest.setTimeout(420_000);

const DEMO = 'parcel-sorter-plateau.ipynb';
const OUT = path.join(OUTPUT_DIR, 'handoff');

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

const text = (s: string | string[]): string => (Array.isArray(s) ? s.join('') : s);

/** A tick label as a number: `0.25`, `−0.5`, `1000`, `10⁻⁵`, `2×10⁻⁵`. */
function tickValue(label: string): number {
  const sup: Record<string, string> = { '⁻': '-', '⁰': '0', '¹': '1', '²': '2', '³': '3', '⁴': '4', '⁵': '5', '⁶': '6', '⁷': '7', '⁸': '8', '⁹': '9' };
  const t = label.replace(/−/g, '-');
  const m = /^(?:(-?[\d.]+)×)?10([⁻⁰¹²³⁴⁵⁶⁷⁸⁹]+)$/.exec(t);
  if (m) return (m[1] === undefined ? 1 : Number(m[1])) * Math.pow(10, Number([...m[2]].map((c) => sup[c]).join('')));
  return Number(t);
}

interface DrawnFigure {
  width: number;
  height: number;
  log: boolean;
  ticks: { label: string; y: number }[];
  firstPoint: { x: number; y: number } | null;
  seriesLengths: number[];
}

/** What each report figure drew, read from the rendered page. */
async function drawnFigures(page: Page): Promise<DrawnFigure[]> {
  return page.evaluate(() =>
    [...document.querySelectorAll('figure svg')].map((svg) => {
      const box = svg.getBoundingClientRect();
      const labels = [...svg.querySelectorAll('text.tick-y')].map((t) => t.textContent ?? '');
      const lines = [...svg.querySelectorAll('g.grid line')].filter((l) => l.getAttribute('y1') === l.getAttribute('y2') && l.getAttribute('x1') !== l.getAttribute('x2'));
      const paths = [...svg.querySelectorAll('g.series path[fill="none"]')] as SVGPathElement[];
      const first = paths[0]?.getPointAtLength(0);
      return {
        width: box.width,
        height: box.height,
        log: (svg.querySelector('text[transform]')?.textContent ?? '').includes('log scale'),
        ticks: labels.map((label, i) => ({ label, y: Number(lines[i]?.getAttribute('y1')) })),
        firstPoint: first ? { x: first.x, y: first.y } : null,
        seriesLengths: paths.map((p) => p.getTotalLength())
      };
    })
  );
}

/** The value at pixel y on an axis given its ticks (linear or log interpolation between the outermost ticks). */
function valueAt(f: DrawnFigure, y: number): number {
  const t = f.ticks.map((k) => ({ v: tickValue(k.label), y: k.y }));
  const a = t[0];
  const b = t[t.length - 1];
  const s = (y - a.y) / (b.y - a.y);
  return f.log ? Math.pow(10, Math.log10(a.v) + s * (Math.log10(b.v) - Math.log10(a.v))) : a.v + s * (b.v - a.v);
}

/**
 * Opens a report with the network off, checks that every figure is drawn, that the first point
 * of the loss figure sits where the y ticks put `firstLoss`, and that nothing was requested;
 * screenshots the page (screen and print media).
 */
async function openReport(file: string, name: string, firstLoss: number): Promise<DrawnFigure[]> {
  const b = await chromium.launch({ executablePath: CHROMIUM, args: CHROMIUM_ARGS });
  try {
    const context = await b.newContext({ offline: true, viewport: { width: 1000, height: 1200 } });
    const page = await context.newPage();
    const requests: string[] = [];
    const errors: string[] = [];
    page.on('request', (r) => requests.push(r.url()));
    page.on('console', (m) => m.type() === 'error' && errors.push(m.text()));
    page.on('pageerror', (e) => errors.push(e.message));
    await page.goto(`file://${file}`);
    const figs = await drawnFigures(page);
    expect(figs.length).toBeGreaterThanOrEqual(1);
    for (const f of figs) {
      expect(f.width).toBeGreaterThan(300);
      expect(f.height).toBeGreaterThan(150);
      expect(f.ticks.length).toBeGreaterThanOrEqual(2);
      expect(f.seriesLengths.length).toBeGreaterThanOrEqual(1);
      expect(f.seriesLengths.every((l) => l > 10)).toBe(true);
    }
    // The loss figure: its first point (step 0 of the first branch) reads back as the stored loss.
    const loss = figs[0];
    expect(loss.firstPoint).not.toBeNull();
    const read = valueAt(loss, (loss.firstPoint as { y: number }).y);
    expect(Math.abs(read - firstLoss) / firstLoss).toBeLessThan(0.02);
    expect(requests.filter((u) => !u.startsWith('file://'))).toEqual([]);
    expect(errors).toEqual([]);
    await page.screenshot({ path: path.join(OUTPUT_DIR, `handoff-report-${name}.png`), fullPage: true });
    await page.emulateMedia({ media: 'print' });
    await page.screenshot({ path: path.join(OUTPUT_DIR, `handoff-report-${name}-print.png`), fullPage: true });
    return figs;
  } finally {
    await b.close();
  }
}

describe('journey 4: a notebook saved in the browser verifies in Node', () => {
  it('steps and branches a demo in the app, saves, downloads through the contents API, and stepwell verify says bit-identical', async () => {
    const page = browser.page;
    await openNotebook(page, app.url.replace('greenhouse-humidity-sensor', 'parcel-sorter-plateau'));
    const cells = page.locator('.jp-NotebookPanel:not(.lm-mod-hidden) .jp-Notebook .jp-Cell');
    const sorter = cells.nth(2);
    const widget = sorter.locator('.sw-CellWidget');
    await widget.waitFor({ timeout: 30_000 });
    await sorter.locator('.sw-Status', { hasText: /^step 100 · / }).waitFor({ timeout: 60_000 });
    // The fix branch: 7 more steps, then a branch of it from step 50 with a smaller rate, stepped 10 times.
    await sorter.locator('.sw-Branch[data-branch="init=lecun-normal,gain=1"]').click();
    await sorter.locator('.sw-Status', { hasText: 'branch init=lecun-normal,gain=1' }).waitFor({ timeout: 30_000 });
    await sorter.locator('.sw-StepN').fill('7');
    await sorter.locator('.sw-Button-stepN').click();
    await sorter.locator('.sw-Status', { hasText: /^step 107 · / }).waitFor({ timeout: 60_000 });
    await sorter.locator('.sw-Button-branch').click();
    const form = sorter.locator('.sw-BranchForm');
    await form.locator('.sw-PatchText').fill('lr: 0.05\n');
    await form.locator('.sw-BranchStep').fill('50');
    await form.locator('.sw-BranchName-input').fill('handoff');
    await form.locator('.sw-Button-make').click();
    await sorter.locator('.sw-Notice', { hasText: 'Branch handoff made at step 50' }).waitFor({ timeout: 30_000 });
    await sorter.locator('.sw-StepN').fill('10');
    await sorter.locator('.sw-Button-stepN').click();
    await sorter.locator('.sw-Status', { hasText: /^step 60 · .* · branch handoff ·/ }).waitFor({ timeout: 60_000 });
    await widget.scrollIntoViewIfNeeded();
    await screenshot(page, 'handoff-1-stepped-in-browser');

    await page.keyboard.press('Escape');
    await page.keyboard.press('Control+s');
    await page.locator('.jp-mod-dirty').waitFor({ state: 'detached', timeout: 20_000 }).catch(() => undefined);
    await page.waitForTimeout(1000);
    const saved = await page.evaluate(async (p) => {
      const jl = (window as unknown as { jupyterapp: { serviceManager: { contents: { get(path: string, o: object): Promise<{ content: unknown }> } } } }).jupyterapp;
      return (await jl.serviceManager.contents.get(p, { content: true })).content as { cells: { source: string | string[]; metadata: Record<string, unknown>; outputs?: { data: Record<string, string | string[]> }[] }[] };
    }, DEMO);
    const file = path.join(OUT, 'parcel-saved-in-browser.ipynb');
    fs.writeFileSync(file, JSON.stringify(saved, null, 1));
    const ledger = saved.cells[2].metadata.stepwell as { engine: string; branches: { name: string; head: { step: number; fingerprint: string } }[] };
    expect(ledger.branches.map((b) => [b.name, b.head.step])).toEqual([['main', 100], ['init=lecun-normal,gain=1', 107], ['handoff', 60]]);

    // Node replays what Chromium computed: every branch bit for bit, exit 0.
    const v = stepwell('verify', file, '--json');
    expect(v.err).toBe('');
    expect(v.code).toBe(0);
    const r = JSON.parse(v.out) as { verdict: string; cells: { branches: { name: string; match: string; steps: number; recordedFingerprint: string; replayedFingerprint: string }[] }[] };
    expect(r.verdict).toBe('bit-identical');
    expect(r.cells[0].branches.map((b) => [b.name, b.match, b.steps])).toEqual([['main', 'bit-identical', 100], ['init=lecun-normal,gain=1', 'bit-identical', 107], ['handoff', 'bit-identical', 60]]);
    for (const b of r.cells[0].branches) expect(b.replayedFingerprint).toBe(ledger.branches.find((x) => x.name === b.name)?.head.fingerprint);
    fs.writeFileSync(path.join(OUT, 'verify.txt'), stepwell('verify', file).out);

    // The saved output's fallback: the loss trace as an SVG image in the markdown any viewer renders.
    const md = text(saved.cells[2].outputs?.[0].data['text/markdown'] ?? '');
    expect(md).toMatch(/!\[Training loss per step: [^\]]+\]\(data:image\/svg\+xml;base64,[A-Za-z0-9+/=]+\)/);
    // JupyterLab's markdown renderer and sanitizer (what JupyterLab shows without Stepwell) draw it.
    await cells.last().click();
    await page.keyboard.press('Escape');
    await page.keyboard.press('b');
    await page.keyboard.press('m');
    await page.keyboard.press('Enter');
    await page.keyboard.insertText(md);
    await page.keyboard.press('Shift+Enter');
    const fallback = page.locator('.jp-MarkdownCell img[src^="data:image/svg+xml"]');
    await fallback.waitFor({ timeout: 20_000 });
    await page.waitForFunction(() => [...document.querySelectorAll('.jp-MarkdownCell img')].some((i) => (i as HTMLImageElement).src.startsWith('data:image/svg+xml') && (i as HTMLImageElement).naturalWidth === 560));
    await fallback.scrollIntoViewIfNeeded();
    await screenshot(page, 'handoff-2-output-fallback-in-markdown');

    // The report of the notebook the browser saved.
    const html = path.join(OUT, 'parcel-saved-in-browser.html');
    const rep = stepwell('report', file, '--out', html);
    expect(rep.code).toBe(0);
    expect(rep.out).toContain('verification: bit-identical');
    const first = stepwell('export', file, '--branch', 'main', '--csv', '--steps', '0').out.split('\n')[1].split(',')[1];
    expect((await openReport(html, 'browser-saved', Number(first))).length).toBeGreaterThanOrEqual(2);
    expect(ourErrors(browser)).toEqual([]);
  });

  it.each([['greenhouse-humidity-sensor', 3], ['parcel-sorter-plateau', 2]] as const)('the report of %s opens offline with its %i figures drawn where their axes say', async (name, count) => {
    const html = path.join(OUT, `${name}.html`);
    expect(stepwell('report', path.join(ROOT, 'demo-notebooks', `${name}.ipynb`), '--out', html).code).toBe(0);
    const csv = stepwell('export', path.join(ROOT, 'demo-notebooks', `${name}.ipynb`), '--branch', 'main', '--csv', '--steps', '0').out;
    const figs = await openReport(html, name, Number(csv.split('\n')[1].split(',')[1]));
    expect(figs).toHaveLength(count);
  });

  it('the report of a notebook with data files (kiln, three branches) opens offline', async () => {
    const d = tempDir('handoff-kiln');
    const { path: nb } = kilnNotebook(d);
    const html = path.join(OUT, 'kiln.html');
    expect(stepwell('report', nb, '--out', html).code).toBe(0);
    const csv = stepwell('export', nb, '--branch', 'main', '--csv', '--steps', '0').out;
    // Losses only: the kiln cell measured no sharpness and has no held-out rows.
    expect(await openReport(html, 'kiln', Number(csv.split('\n')[1].split(',')[1]))).toHaveLength(1);
  });
});
