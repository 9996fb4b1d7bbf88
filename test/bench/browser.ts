/**
 * The browser-side figures, measured in the embedded app in headless Chromium through the e2e
 * harness (`test/e2e/harness.ts`): a bench, not a test — it asserts nothing about time.
 *
 * 1. Step plus its readouts on the demo models: in every stepwell cell of every demo notebook,
 *    the time from a click on Step Once to the cell showing the next step (the engine's update
 *    in its Web Worker, the step record with the layer readouts, the ledger written back to the
 *    notebook, the widget redrawn), taken in the page by a MutationObserver. The first click
 *    also starts the cell's engine and is reported apart.
 * 2. A curvature readout at P = 85 002: a cell with the benchmark's MLP c (64-256-256-10, ReLU,
 *    512 rows of seeded data of our own), run, then Measure curvature until the readout shows
 *    (Lanczos at both ends, the spectral density and the trace, as the cell computes them): the
 *    time to the top end's early readout (λmax and the stability limit) and to the complete one;
 *    three readouts at the same step, their medians reported.
 */
import { loadavg } from 'node:os';
import type { Page } from 'playwright-core';
import { appendAndRunCell, ensureBuilt, launchBrowser, openNotebook, startApp } from '../e2e/harness';
import { buildMlp } from './networks';

/** One browser figure. */
export interface BrowserRow {
  what: string;
  subject: string;
  /** Median milliseconds (or the single figure when reps is 1). */
  ms: number;
  reps: number;
  /** Every repetition's milliseconds. */
  all: number[];
}

const DEMOS = ['greenhouse-humidity-sensor.ipynb', 'parcel-sorter-plateau.ipynb'];
const STEPS = 12;

const median = (xs: number[]): number => [...xs].sort((a, b) => a - b)[xs.length >> 1];

/** Spec text of the P = 85 002 network over MLP c's seeded rows (JSON is YAML; the comment line marks the cell), with `recipe`. */
function bigSpec(recipe: { optimizer: string; lr: number } = { optimizer: 'sgd', lr: 0.05 }): string {
  const c = { widths: [64, 256, 256, 10], act: 'relu' as const, loss: 'cross-entropy' as const, batch: 512 };
  const { x, y } = buildMlp(c, 1);
  const rows = Array.from({ length: c.batch }, (_, r) => Array.from(x.subarray(r * 64, (r + 1) * 64), (v) => Number(v.toFixed(4))));
  const spec = {
    seed: 5,
    model: { inputs: 64, layers: [{ units: 256, activation: 'relu' }, { units: 256, activation: 'relu' }, { units: 10, activation: 'linear' }] },
    data: { x: rows, y: Array.from(y) },
    loss: 'cross-entropy',
    recipe,
  };
  return `# stepwell: benchmark network, P = 85 002\n${JSON.stringify(spec)}\n`;
}

/**
 * One curvature readout of the last cell of the page, clicked in the page (the notebook may keep a
 * long cell's output out of view): milliseconds to its top end (the head marked partial) and to
 * the complete readout (the next head not so marked). The button is enabled again only after
 * the ledger is written back, later than the readout shows.
 */
function measureCurvature(page: Page): Promise<{ top: { ms: number; text: string }; all: number }> {
  return page.evaluate(async () => {
    const cells = document.querySelectorAll('.sw-CellWidget');
    const cell = cells[cells.length - 1] as HTMLElement;
    (cell.querySelector('.sw-Tab[data-tab="curvature"]') as HTMLElement).click();
    while (cell.querySelector('.sw-Button-curvature') === null) await new Promise((r) => setTimeout(r, 10));
    const button = cell.querySelector('.sw-Button-curvature') as HTMLButtonElement;
    const t0 = performance.now();
    let top: { ms: number; text: string } | null = null;
    return await new Promise<{ top: { ms: number; text: string }; all: number }>((resolve, reject) => {
      // A readout that never showed its top end, or never completed, would otherwise leave the bench waiting for good.
      const late = setTimeout(() => {
        mo.disconnect();
        reject(new Error('the curvature readout did not show its top end and then the complete readout within 120 s'));
      }, 120_000);
      const mo = new MutationObserver(() => {
        const head = cell.querySelector('.sw-CurvatureHead') as HTMLElement | null;
        if (head === null) return;
        if (head.dataset.partial === 'true') {
          if (top === null) top = { ms: performance.now() - t0, text: head.textContent ?? '' };
        } else if (top !== null) {
          clearTimeout(late);
          mo.disconnect();
          resolve({ top, all: performance.now() - t0 });
        }
      });
      mo.observe(cell, { subtree: true, childList: true, characterData: true });
      button.click();
    });
  });
}

/** Runs both parts (or only those not switched off); returns the rows and the Chromium version. */
export async function browserFigures(parts: { steps?: boolean; curvature?: boolean } = {}): Promise<{ rows: BrowserRow[]; chromium: string; load: number[] }> {
  ensureBuilt();
  const app = await startApp();
  let session = await launchBrowser();
  const rows: BrowserRow[] = [];
  try {
    let page = session.page;
    // tsx (esbuild, keepNames) wraps named functions in __name(...): page-side code needs it too.
    await page.addInitScript({ content: 'globalThis.__name = (f) => f;' });
    const chromium = session.context.browser()?.version() ?? 'unknown';
    for (const demo of parts.steps === false ? [] : DEMOS) {
      await openNotebook(page, `${app.origin}/lab/tree/${demo}`);
      // Only this notebook's cells: the previous demo stays open in a hidden tab, and its widget
      // may still be in the page. The shell may still name the previous tab current for a moment
      // (a full run once waited on the hidden one's cells): wait until it names this notebook.
      const handle = await page.waitForFunction(
        (name) => {
          const current = (window as unknown as { jupyterapp: { shell: { currentWidget: { id: string; title: { label: string } } | null } } }).jupyterapp.shell.currentWidget;
          return current !== null && current.title.label === name ? current.id : null;
        },
        demo,
        { timeout: 60_000 }
      );
      const panel = (await handle.jsonValue()) as string;
      const cells = page.locator(`[id="${panel}"] .sw-CellWidget`);
      await cells.first().waitFor({ timeout: 60_000 });
      const count = await cells.count();
      for (let k = 0; k < count; k++) {
        const times: number[] = await page.evaluate(
          async ({ index, steps, panelId }) => {
            const cell = (document.getElementById(panelId) as HTMLElement).querySelectorAll('.sw-CellWidget')[index] as HTMLElement;
            cell.scrollIntoView();
            const status = (): string => cell.querySelector('.sw-Status')?.textContent ?? '';
            const stepOf = (): number => Number(/^step (\d+)/.exec(status())?.[1] ?? NaN);
            const out: number[] = [];
            for (let s = 0; s < steps; s++) {
              const button = cell.querySelector('.sw-Button-step') as HTMLButtonElement;
              // wait until the cell is idle (the previous action's ledger written back)
              while (button.disabled) await new Promise((r) => setTimeout(r, 5));
              const before = stepOf();
              const t0 = performance.now();
              await new Promise<void>((resolve) => {
                const check = (): boolean => stepOf() === before + 1 && !(cell.querySelector('.sw-Button-step') as HTMLButtonElement).disabled;
                const mo = new MutationObserver(() => {
                  if (check()) {
                    mo.disconnect();
                    resolve();
                  }
                });
                mo.observe(cell, { subtree: true, childList: true, characterData: true, attributes: true });
                button.click();
              });
              out.push(performance.now() - t0);
            }
            return out;
          },
          { index: k, steps: STEPS, panelId: panel }
        );
        const subject = `${demo.replace('.ipynb', '')}, cell ${k + 1}`;
        rows.push({ what: 'first Step Once (starts the engine)', subject, ms: times[0], reps: 1, all: [times[0]] });
        const rest = times.slice(1);
        rows.push({ what: 'Step Once with its readouts', subject, ms: median(rest), reps: rest.length, all: rest });
        process.stdout.write(`${subject}: first ${times[0].toFixed(0)} ms, then median ${median(rest).toFixed(1)} ms (${rest.map((t) => t.toFixed(0)).join(' ')})\n`);
      }
    }
    if (parts.curvature === false) return { rows, chromium, load: loadavg() };
    // Part 2: the P = 85 002 cell, appended to the first demo notebook (never saved), in a fresh
    // browser: the stepped demos stay unsaved in the first one, and leaving them would ask.
    await session.close();
    session = await launchBrowser();
    page = session.page;
    await page.addInitScript({ content: 'globalThis.__name = (f) => f;' });
    await openNotebook(page, `${app.origin}/lab/tree/${DEMOS[0]}`);
    const subject = 'MLP c 64-256-256-10, 512 rows (P 85 002)';
    // SGD at step 0; Adam after one update (before it there is no preconditioner, so no step
    // metric and no bound): the adaptive readout also runs Lanczos on the step metric.
    for (const [recipe, steps, label] of [[{ optimizer: 'sgd', lr: 0.05 }, 0, ''], [{ optimizer: 'adam', lr: 0.001 }, 1, ', Adam after one update']] as const) {
      await appendAndRunCell(page, bigSpec(recipe));
      const big = page.locator('.sw-CellWidget').last();
      await big.locator('.sw-Status', { hasText: /^step 0 ·/ }).waitFor({ state: 'attached', timeout: 300_000 });
      if (steps > 0) {
        await big.locator('.sw-Button-step').click();
        await big.locator('.sw-Status', { hasText: new RegExp(`^step ${steps} ·`) }).waitFor({ state: 'attached', timeout: 300_000 });
        await big.locator('.sw-Button-step:not([disabled])').waitFor({ timeout: 300_000 });
      }
      const runs: Array<{ top: { ms: number; text: string }; all: number }> = [];
      for (let r = 0; r < 3; r++) runs.push(await measureCurvature(page));
      const head = await big.locator('.sw-CurvatureHead').textContent();
      const tops = runs.map((t) => t.top.ms);
      const alls = runs.map((t) => t.all);
      rows.push({ what: `curvature readout${label}, top end (click to λmax and the limit shown)`, subject: `${subject}: ${runs[0].top.text}`, ms: median(tops), reps: tops.length, all: tops });
      rows.push({ what: `curvature readout${label}, complete (click to readout shown)`, subject: `${subject}: ${head ?? ''}`, ms: median(alls), reps: alls.length, all: alls });
      process.stdout.write(`  top end: ${runs[0].top.text}\n`);
      process.stdout.write(`curvature readout at P = 85 002${label}: top end ${tops.map((t) => t.toFixed(0)).join(' ')} ms, complete ${alls.map((t) => t.toFixed(0)).join(' ')} ms (the first of the SGD cell starts the helper) — ${head ?? ''}\n`);
    }
    return { rows, chromium, load: loadavg() };
  } finally {
    await session.close();
    await app.stop();
  }
}
