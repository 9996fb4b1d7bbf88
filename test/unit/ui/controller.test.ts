/**
 * The cell controller against a fake notebook cell (plain object) and the real engine host
 * in-process: run, step, persist, restore from the written ledger, corrupt ledgers, edits.
 */
import { CellController } from '../../../src/ui/controller';
import type { CellHost, RecordCell } from '../../../src/ui/ports';
import { DEFAULT_SETTINGS } from '../../../src/ui/ports';
import { ledgerGlue } from '../../../src/ui/ledger-glue';
import { EngineClient } from '../../../src/worker/client';
import { inProcessPort } from '../../../src/worker/in-process';
import { realCore } from '../../../src/worker/core-adapter';
import { parseSpec, TEMPLATE_SPEC } from '../../../src/experiment';
import type { CellSummary } from '../../../src/ui/summary';
import { STEPWELL_MIME } from '../../../src/ui/summary';

interface FakeCell extends CellHost {
  source: string;
  metadata: unknown;
  outputs: { summary: CellSummary | null; markdown: string } | null;
  writes: number;
  /** Decision records written (the fake notebook keeps one per cell). */
  records: RecordCell[];
}

function fakeCell(source = TEMPLATE_SPEC, metadata?: unknown): FakeCell {
  const cell: FakeCell = {
    source,
    metadata,
    outputs: null,
    writes: 0,
    records: [],
    cellId: () => 'cell-1',
    findRecord: () => (cell.records.length > 0 ? 1 : null),
    writeRecord: r => {
      cell.records = [JSON.parse(JSON.stringify(r))];
    },
    readSource: () => cell.source,
    // The notebook stores JSON: mimic it so nothing non-JSON survives a save.
    readLedger: () => (cell.metadata === undefined ? undefined : JSON.parse(JSON.stringify(cell.metadata))),
    writeLedger: v => {
      cell.metadata = JSON.parse(JSON.stringify(v));
      cell.writes++;
    },
    writeOutputs: (summary, markdown) => {
      cell.outputs = { summary, markdown };
    }
  };
  return cell;
}

const check = (text: string) => {
  const r = parseSpec(text);
  return r.ok ? [] : r.errors;
};

function controller(cell: FakeCell): CellController {
  return new CellController({
    host: cell,
    engine: () => new EngineClient(inProcessPort(realCore)),
    ledger: ledgerGlue,
    checkSpec: check,
    settings: () => ({ ...DEFAULT_SETTINGS, checkpointEvery: 4, checkpointCap: 5 })
  });
}

describe('CellController', () => {
  it('runs a new cell, steps, and writes a ledger that a second controller restores without re-running', async () => {
    const cell = fakeCell();
    const c = controller(cell);
    expect(c.state.ledger).toBe('absent');
    expect(await c.run()).toBe(true);
    expect(c.state.summary?.step).toBe(0);
    expect(await c.step(10)).toBe(true);
    expect(c.state.summary?.step).toBe(10);
    expect(c.state.trajectory).toHaveLength(11);
    expect(cell.outputs?.summary?.step).toBe(10);
    expect(cell.outputs?.markdown).toContain('step 10');
    expect(cell.outputs?.markdown).toContain('not a guarantee');
    const fingerprint = c.state.summary?.fingerprint;
    c.dispose();

    let engines = 0;
    const reopened = new CellController({
      host: cell,
      engine: () => {
        engines++;
        return new EngineClient(inProcessPort(realCore));
      },
      ledger: ledgerGlue,
      checkSpec: check,
      settings: () => DEFAULT_SETTINGS
    });
    // Restored from metadata alone: same step, same trace, no engine started.
    expect(engines).toBe(0);
    expect(reopened.state.summary?.step).toBe(10);
    expect(reopened.state.ledgerBytes).toBe(c.state.ledgerBytes);
    expect(reopened.state.summary?.fingerprint).toBe(fingerprint);
    expect(reopened.state.trajectory.map(r => r.loss)).toEqual(c.state.trajectory.map(r => r.loss));
    expect(await reopened.verify()).toBe(true);
    expect(reopened.state.verify?.map(v => v.match)).toEqual(['bit-identical']);
    expect(await reopened.step(2)).toBe(true);
    expect(reopened.state.summary?.step).toBe(12);
    expect(engines).toBe(1);
  });

  it('keeps at most the checkpoint cap in the ledger and can rewind', async () => {
    const cell = fakeCell();
    const c = controller(cell);
    await c.run();
    await c.step(40);
    const stored = cell.metadata as { branches: { checkpoints: unknown[] }[] };
    // The head is stored apart from the checkpoints before it: cap 5 = head + 4.
    expect(stored.branches[0].checkpoints.length).toBeLessThanOrEqual(4);
    expect(await c.rewind(13)).toBe(true);
    expect(c.state.summary?.step).toBe(13);
    // Going back keeps the later steps: the trace still runs to step 40.
    expect(c.state.summary?.tip).toBe(40);
    expect(c.state.trajectory).toHaveLength(41);
    const saved = (cell.metadata as { branches: { cursor?: number; head: { step: number } }[] }).branches[0];
    expect([saved.cursor, saved.head.step]).toEqual([13, 40]);
  });

  it('shows spec problems with line numbers and runs nothing', async () => {
    const cell = fakeCell(TEMPLATE_SPEC.replace('units: 5', 'units: 0'));
    const c = controller(cell);
    expect(c.state.problems.length).toBeGreaterThan(0);
    expect(c.state.problems[0].line).toBe(TEMPLATE_SPEC.split('\n').findIndex(l => l.includes('units: 5')) + 1);
    expect(await c.run()).toBe(false);
    expect(cell.metadata).toBeUndefined();
    expect(cell.outputs?.summary).toBeNull();
    expect(cell.outputs?.markdown).toContain('problems');
  });

  it('refuses to step an edited spec until the cell is run again, then starts over at step 0', async () => {
    const cell = fakeCell();
    const c = controller(cell);
    await c.run();
    await c.step(5);
    cell.source = TEMPLATE_SPEC.replace('lr: 0.1 ', 'lr: 0.05');
    c.sourceChanged();
    expect(c.state.specEdited).toBe(true);
    expect(await c.step(1)).toBe(false);
    expect(c.state.summary?.step).toBe(5);
    // Running the edited text would discard 5 steps: the controller asks first and changes nothing.
    expect(await c.run()).toBe(false);
    expect(c.state.confirm?.kind).toBe('reset');
    expect(c.state.confirm?.text).toContain('discards 5 steps');
    expect(c.state.summary?.step).toBe(5);
    c.cancelConfirm();
    expect(await c.run()).toBe(false);
    expect(await c.confirm()).toBe(true);
    expect(c.state.summary?.step).toBe(0);
    expect(c.state.summary?.recipe).toContain('η=0.05');
  });

  it('re-running is deterministic: the same text keeps the session, text with problems runs nothing and says the old session is shown', async () => {
    const cell = fakeCell();
    const c = controller(cell);
    expect(await c.run()).toBe(true);
    await c.step(4);
    const print = c.state.summary?.fingerprint;
    for (let i = 0; i < 3; i++) {
      expect(await c.run()).toBe(true);
      expect([c.state.summary?.step, c.state.summary?.fingerprint]).toEqual([4, print]);
    }
    cell.source = TEMPLATE_SPEC.replace('units: 5', 'units: 0');
    expect(await c.run()).toBe(false);
    expect(c.state.notice?.text).toMatch(/^The spec has 1 problem \(listed above\); nothing was run\. The readouts still show the session of the previous text, at step 4\.$/);
    expect(c.state.summary?.step).toBe(4);
    cell.source = TEMPLATE_SPEC;
    expect(await c.run()).toBe(true);
    expect(c.state.summary?.step).toBe(4);
  });

  it('Reset asks before discarding steps; an empty session resets at once', async () => {
    const cell = fakeCell();
    const c = controller(cell);
    await c.run();
    expect(await c.reset()).toBe(true);
    await c.step(3);
    expect(await c.reset()).toBe(false);
    expect(c.state.confirm).toEqual({ kind: 'reset', text: 'Reset starts a new session at step 0 from the spec text and discards 3 steps. Start over?' });
    expect(c.state.summary?.step).toBe(3);
    expect(await c.confirm()).toBe(true);
    expect(c.state.summary?.step).toBe(0);
  });

  it('reports a corrupt ledger, leaves the spec untouched, and starts over only when asked', async () => {
    const good = fakeCell();
    const first = controller(good);
    await first.run();
    await first.step(3);
    first.dispose();
    const broken = JSON.parse(JSON.stringify(good.metadata));
    broken.branches[0].head.state.params = 'AAAA';
    const cell = fakeCell(TEMPLATE_SPEC, broken);
    const c = controller(cell);
    expect(c.state.ledger).toBe('corrupt');
    expect(c.state.notice?.text).toContain('cannot be read');
    expect(c.state.notice?.text).toContain('params');
    expect(await c.run()).toBe(false);
    expect(cell.source).toBe(TEMPLATE_SPEC);
    expect(cell.writes).toBe(0);
    expect(await c.run(true)).toBe(true);
    expect(c.state.ledger).toBe('ok');
    expect(c.state.summary?.step).toBe(0);
    expect(cell.writes).toBe(1);
  });

  it('follows a ledger changed from outside (an undo) and resumes from it', async () => {
    const cell = fakeCell();
    const c = controller(cell);
    await c.run();
    await c.step(5);
    const at5 = JSON.parse(JSON.stringify(cell.metadata));
    const print5 = c.state.summary?.fingerprint;
    await c.step(3);
    expect(c.state.summary?.step).toBe(8);
    cell.metadata = at5;
    c.readLedger();
    expect(c.state.summary?.step).toBe(5);
    expect(c.state.summary?.fingerprint).toBe(print5);
    expect(await c.step(1)).toBe(true);
    expect(c.state.summary?.step).toBe(6);
    expect(await c.verify()).toBe(true);
    cell.metadata = undefined;
    c.readLedger();
    expect(c.state.summary).toBeNull();
    expect(c.state.trajectory).toEqual([]);
  });

  it('uses our own mime type for the live widget', () => {
    expect(STEPWELL_MIME).toBe('application/vnd.stepwell.cell+json');
  });
});
