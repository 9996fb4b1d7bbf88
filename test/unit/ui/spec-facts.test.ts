/**
 * The spec check off the page (as the app's reader worker answers it): the controller never
 * parses on its own thread when `specFactsLater` is there, keeps one live check in flight (texts
 * typed meanwhile are not queued; the newest is checked next), and reuses the answer for the
 * same text on Shift+Enter.
 */
import { CellController } from '../../../src/ui/controller';
import type { SpecFacts } from '../../../src/ui/cell-controller-base';
import { DEFAULT_SETTINGS } from '../../../src/ui/ports';
import { ledgerGlue } from '../../../src/ui/ledger-glue';
import { EngineClient } from '../../../src/worker/client';
import { inProcessPort } from '../../../src/worker/in-process';
import { realCore } from '../../../src/worker/core-adapter';
import { parseSpec, TEMPLATE_SPEC } from '../../../src/experiment';
import { cellFileNames } from '../../../src/experiment/patch';
import { fakeCell } from './fake-cell';

/** A worker stand-in whose answers the test releases one by one. */
function laterWorker(): { calls: string[]; release(): void; facts: (text: string) => Promise<SpecFacts> } {
  const calls: string[] = [];
  const waiting: (() => void)[] = [];
  return {
    calls,
    release: () => waiting.shift()?.(),
    facts: text => {
      calls.push(text);
      return new Promise(resolve => waiting.push(() => {
        const p = parseSpec(text, 'auto', { deferFiles: true });
        resolve({ problems: p.ok ? [] : p.errors, files: cellFileNames(text) });
      }));
    }
  };
}

const tick = (): Promise<void> => new Promise(r => setTimeout(r, 0));

describe('the spec check off the page', () => {
  it('keeps one live check in flight, checks the newest text next, and reuses it on Shift+Enter', async () => {
    const cell = fakeCell(TEMPLATE_SPEC);
    const worker = laterWorker();
    let pageParses = 0;
    const c = new CellController({
      host: cell,
      engine: () => new EngineClient(inProcessPort(realCore)),
      ledger: ledgerGlue,
      checkSpec: () => {
        pageParses++;
        return [];
      },
      specFactsLater: worker.facts,
      settings: () => DEFAULT_SETTINGS
    });
    // The first check (after the empty ledger read) is in flight; five edits arrive meanwhile.
    await tick();
    expect(worker.calls.length).toBe(1);
    for (let k = 1; k <= 5; k++) {
      cell.source = TEMPLATE_SPEC.replace('lr:', `# edit ${k}\n  lr:`);
      void c.sourceChanged();
    }
    expect(worker.calls.length).toBe(1);
    worker.release();
    await tick();
    // Only the newest edit is checked next.
    expect(worker.calls.length).toBe(2);
    expect(worker.calls[1]).toContain('# edit 5');
    worker.release();
    await tick();
    expect(c.state.problems).toEqual([]);
    // Shift+Enter on the same text asks nothing new.
    const ran = c.run();
    await tick();
    expect(worker.calls.length).toBe(2);
    expect(await ran).toBe(true);
    expect(c.state.summary?.step).toBe(0);
    expect(pageParses).toBe(0);
    c.dispose();
  });

  it('runs nothing when the worker finds problems, and says so', async () => {
    const cell = fakeCell(TEMPLATE_SPEC.replace(/lr: [0-9.]+/, 'lr: -1'));
    const worker = laterWorker();
    const c = new CellController({ host: cell, engine: () => { cell.engines++; return new EngineClient(inProcessPort(realCore)); }, ledger: ledgerGlue, checkSpec: () => [], specFactsLater: worker.facts, settings: () => DEFAULT_SETTINGS });
    await tick();
    worker.release();
    await tick();
    const ran = c.run();
    expect(await ran).toBe(false);
    expect(c.state.problems.length).toBeGreaterThan(0);
    expect(c.state.problems[0].message).toMatch(/lr/);
    expect(cell.engines).toBe(0);
    c.dispose();
  });
});
