/**
 * The cell controller on unreadable ledgers, non-finite runs and the ledger size limit: the
 * ledger read asynchronously (as the app's worker glue does), an error output for a cell that
 * had none (on reading and after Shift+Enter), Reset asking before replacing, a kept copy, the
 * branch staying at its last finite state, and an oversize ledger refused with the session kept.
 */
import { CellController } from '../../../src/ui/controller';
import type { CellHost, CellSettings, LedgerGlue } from '../../../src/ui/ports';
import { DEFAULT_SETTINGS } from '../../../src/ui/ports';
import { ledgerGlue } from '../../../src/ui/ledger-glue';
import { EngineClient } from '../../../src/worker/client';
import { inProcessPort } from '../../../src/worker/in-process';
import { realCore } from '../../../src/worker/core-adapter';
import { parseSpec, TEMPLATE_SPEC } from '../../../src/experiment';
import type { CellSummary } from '../../../src/ui/summary';

interface Cell extends CellHost {
  metadata: Record<string, unknown>;
  outputs: { summary: CellSummary | null; markdown: string } | null;
  writes: number;
}

function cell(source: string, ledger?: unknown, withOutput = false): Cell {
  const c: Cell = {
    metadata: ledger === undefined ? {} : { stepwell: ledger },
    outputs: withOutput ? { summary: null, markdown: 'old' } : null,
    writes: 0,
    cellId: () => 'c1',
    findRecord: () => null,
    writeRecord: () => undefined,
    readSource: () => source,
    readLedger: () => (c.metadata.stepwell === undefined ? undefined : JSON.parse(JSON.stringify(c.metadata.stepwell))),
    writeLedger: v => {
      c.metadata.stepwell = JSON.parse(JSON.stringify(v));
      c.writes++;
    },
    writeOutputs: (summary, markdown) => {
      c.outputs = { summary, markdown };
    },
    hasOutput: () => c.outputs !== null,
    keepAside: value => {
      c.metadata['stepwell-unreadable'] = { value };
      return 'stepwell-unreadable';
    }
  };
  return c;
}

/** The glue as the app uses it: answers later, like a worker. */
const asyncGlue: LedgerGlue = { read: (v, l) => new Promise(resolve => setTimeout(() => resolve(ledgerGlue.read(v, l) as ReturnType<typeof ledgerGlue.read> extends Promise<infer R> ? R : never), 5)) };

function controller(c: Cell, glue: LedgerGlue = ledgerGlue, settings: Partial<CellSettings> = {}): CellController {
  return new CellController({
    host: c,
    engine: () => new EngineClient(inProcessPort(realCore)),
    ledger: glue,
    checkSpec: t => { const p = parseSpec(t); return p.ok ? [] : p.errors; },
    settings: () => ({ ...DEFAULT_SETTINGS, checkpointEvery: 4, ...settings })
  });
}

async function goodLedger(): Promise<unknown> {
  const c = cell(TEMPLATE_SPEC);
  const k = controller(c);
  await k.run();
  await k.step(3);
  k.dispose();
  return c.metadata.stepwell;
}

describe('unreadable ledgers in the cell', () => {
  it('reads through an asynchronous glue: "reading" first, then the ledger', async () => {
    const c = cell(TEMPLATE_SPEC, await goodLedger(), true);
    const k = controller(c, asyncGlue);
    expect(k.state.ledger).toBe('reading');
    expect(await k.run()).toBe(false);
    expect(k.state.notice?.text).toMatch(/still being read/);
    await k.readLedger();
    expect(k.state.ledger).toBe('ok');
    expect(k.state.summary?.step).toBe(3);
    k.dispose();
  });

  it('writes an error output for an unreadable ledger in a cell without outputs, and leaves the metadata alone', async () => {
    const bad = { ...(await goodLedger() as Record<string, unknown>), seed: 12345 };
    const before = JSON.stringify(bad);
    const c = cell(TEMPLATE_SPEC, bad);
    const k = controller(c, asyncGlue);
    expect(c.outputs).toBeNull();
    await k.readLedger();
    expect(k.state.ledger).toBe('corrupt');
    expect(c.outputs?.summary).toBeNull();
    expect(c.outputs?.markdown).toMatch(/saved ledger of this cell cannot be read/);
    expect(c.outputs?.markdown).toContain('seed: is 12345, but the spec says seed: 7');
    // Shift+Enter: shown again, nothing run, nothing written.
    c.outputs = null;
    expect(await k.run()).toBe(false);
    expect(c.outputs).not.toBeNull();
    expect(k.state.notice?.text).toMatch(/^The saved ledger cannot be read: seed: is 12345.*Nothing was run and nothing was changed/);
    expect(c.writes).toBe(0);
    expect(JSON.stringify(c.metadata.stepwell)).toBe(before);
    k.dispose();
  });

  it('does not write an output over an existing one when reading', async () => {
    const c = cell(TEMPLATE_SPEC, { format: 'stepwell-ledger', version: 2 }, true);
    const k = controller(c);
    expect(k.state.ledger).toBe('corrupt');
    expect(c.outputs?.markdown).toBe('old');
    k.dispose();
  });

  it('asks before Reset replaces an unreadable ledger; "Keep a copy" moves it under another key first', async () => {
    const bad = { ...(await goodLedger() as Record<string, unknown>), parameterCount: 3 };
    const c = cell(TEMPLATE_SPEC, bad, true);
    const k = controller(c);
    expect(k.state.ledger).toBe('corrupt');
    expect(await k.reset()).toBe(false);
    expect(k.state.confirm).toMatchObject({ kind: 'replace-ledger', canKeep: true });
    expect(k.state.confirm?.text).toMatch(/cannot be read.*Keep a copy.*stepwell-unreadable.*Start over\?/);
    expect(c.writes).toBe(0);
    k.cancelConfirm();
    expect(JSON.stringify(c.metadata.stepwell)).toBe(JSON.stringify(bad));
    await k.reset();
    expect(await k.replaceUnreadable(true)).toBe(true);
    expect(c.metadata['stepwell-unreadable']).toEqual({ value: bad });
    expect(k.state.ledger).toBe('ok');
    expect(k.state.summary?.step).toBe(0);
    expect(k.state.notice?.text).toMatch(/kept under the cell's metadata key 'stepwell-unreadable'/);
    k.dispose();
  });

  it('the confirmation\'s plain yes replaces without a copy', async () => {
    const c = cell(TEMPLATE_SPEC, { format: 'stepwell-ledger', version: 2, spec: TEMPLATE_SPEC }, true);
    const k = controller(c);
    await k.reset();
    expect(await k.confirm()).toBe(true);
    expect(c.metadata['stepwell-unreadable']).toBeUndefined();
    expect(k.state.ledger).toBe('ok');
    k.dispose();
  });
});

describe('non-finite runs and the ledger size limit in the cell', () => {
  it('stays at the last finite step, says so, and saves that state as the head', async () => {
    const wild = TEMPLATE_SPEC.replace('lr: 0.1 ', 'lr: 1e6 ');
    const c = cell(wild);
    const k = controller(c);
    await k.run();
    await k.step(200);
    const s = k.state.summary;
    expect(k.state.notice?.text).toMatch(/non-finite \((NaN|Infinity|-Infinity)\) at step (\d+).*That step was not kept: the branch stays at step (\d+), its last finite state/);
    const [, bad, kept] = /at step (\d+).*stays at step (\d+)/.exec(k.state.notice?.text ?? '') ?? [];
    expect(Number(kept)).toBe(Number(bad) - 1);
    expect(s?.step).toBe(Number(kept));
    const head = (c.metadata.stepwell as { branches: { head: { step: number } }[] }).branches[0].head;
    expect(head.step).toBe(Number(kept));
    expect(k.state.trajectory.every(r => Number.isFinite(r.loss))).toBe(true);
    k.dispose();
  });

  it('refuses to open a ledger above the limit: shown as too large, never sent to the reader, the metadata untouched', async () => {
    const c = cell(TEMPLATE_SPEC);
    const k = controller(c);
    await k.run();
    await k.step(5);
    k.dispose();
    const saved = JSON.stringify(c.metadata.stepwell);
    // source: ECMAScript JSON.stringify and TextEncoder (UTF-8) give the size the limit is about
    const size = new TextEncoder().encode(saved).length;
    let sent = 0;
    const counting: LedgerGlue = { read: (v, l, m) => { sent++; return ledgerGlue.read(v, l, m); } };
    const small = controller(c, counting, { maxLedgerBytes: size - 1 });
    expect(sent).toBe(1);
    expect(small.state.ledger).toBe('corrupt');
    expect(small.state.ledgerMessage).toMatch(new RegExp(`^too large to open: ${size} bytes > limit ${size - 1} bytes \\(setting maxLedgerBytes\\)`));
    expect(small.state.notice?.text).toContain('too large to open');
    // The cell has our output (its widget shows the message); the output is not rewritten.
    expect(c.outputs?.markdown).toContain('at step 5');
    expect(JSON.stringify(c.metadata.stepwell)).toBe(saved);
    expect(await small.run()).toBe(false);
    expect(JSON.stringify(c.metadata.stepwell)).toBe(saved);
    small.dispose();
    // At exactly its size it opens.
    const fits = controller(c, ledgerGlue, { maxLedgerBytes: size });
    expect(fits.state.ledger).toBe('ok');
    expect(fits.state.summary?.step).toBe(5);
    fits.dispose();
  });

  it('refuses to save a ledger above the limit with a message in the cell, keeping the session and the previous ledger', async () => {
    const c = cell(TEMPLATE_SPEC);
    const k = controller(c);
    await k.run();
    const saved = JSON.stringify(c.metadata.stepwell);
    const size = saved.length;
    k.dispose();
    const k2 = controller(c, ledgerGlue, { maxLedgerBytes: size + 200 });
    expect(await k2.step(40)).toBe(false);
    expect(k2.state.notice?.text).toMatch(/The ledger was not written \(the notebook keeps the previous one\): the ledger would take [\d ]+ bytes, above the limit of [\d ]+ \(setting maxLedgerBytes\); nothing is lost/);
    expect(JSON.stringify(c.metadata.stepwell)).toBe(saved);
    expect(k2.state.summary?.step).toBe(40);
    expect(c.outputs?.summary?.step).toBe(40);
    k2.dispose();
  });
});
