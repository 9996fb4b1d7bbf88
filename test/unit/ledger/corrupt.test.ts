/**
 * The corrupt-ledger suite: every corruption of `corruptions.ts` applied to every real ledger it
 * fits (the version-2 fixtures and the demo notebooks' cells), read as a notebook file would be
 * (through JSON text). Each must be refused when the ledger is opened — by the page's reader
 * (`viewLedger`, what the engine worker runs for the page), by the engine's resume, and by the
 * cell controller — with the located problem (field, branch, step) and its message, and the stored
 * value must be left exactly as it was, also after the user runs the cell.
 */
import { CORRUPTIONS, sources, type Raw } from './corruptions';
import { viewLedger } from '../../../src/worker/ledger-view';
import { EngineHost } from '../../../src/worker/engine-host';
import { realCore } from '../../../src/worker/core-adapter';
import type { EngineReply } from '../../../src/worker/protocol';
import { CellController } from '../../../src/ui/controller';
import { DEFAULT_SETTINGS, type CellHost } from '../../../src/ui/ports';
import { ledgerGlue } from '../../../src/ui/ledger-glue';
import { EngineClient } from '../../../src/worker/client';
import { inProcessPort } from '../../../src/worker/in-process';
import { parseSpec } from '../../../src/experiment';
import type { CellSummary } from '../../../src/ui/summary';

const SOURCES = sources();
const CASES = SOURCES.flatMap((src) =>
  CORRUPTIONS.filter((c) => c.applies === undefined || c.applies(JSON.parse(JSON.stringify(src.raw)) as Raw)).map((c) => {
    const copy = JSON.parse(JSON.stringify(src.raw)) as Raw;
    const replaced = c.edit(copy);
    // As a notebook file holds it: JSON text, read back (own '__proto__' keys survive JSON.parse).
    const text = JSON.stringify(replaced === undefined ? copy : replaced);
    return { label: `${src.name}: ${c.name}`, text, c, edited: copy };
  })
);

function fakeCell(source: string, metadata: unknown): CellHost & { metadata: unknown; writes: number; outputs: { summary: CellSummary | null; markdown: string } | null } {
  const cell = {
    metadata,
    writes: 0,
    outputs: null as { summary: CellSummary | null; markdown: string } | null,
    cellId: () => 'c',
    findRecord: () => null,
    writeRecord: () => undefined,
    readSource: () => source,
    readLedger: () => JSON.parse(JSON.stringify(cell.metadata)) as unknown,
    writeLedger: (v: object) => {
      cell.metadata = v;
      cell.writes++;
    },
    writeOutputs: (summary: CellSummary | null, markdown: string) => {
      cell.outputs = { summary, markdown };
    }
  };
  return cell;
}

describe('corrupt ledgers', () => {
  afterAll(() => {
    // The README's reliability table quotes this line.
    console.log(`corrupt-ledger suite: ${CASES.length} corruptions (${CORRUPTIONS.length} kinds × ${SOURCES.length} real ledgers where they apply)`);
  });

  it('has at least 80 corruptions of real ledgers, each source untouched by generating them', () => {
    expect(SOURCES.length).toBe(4);
    expect(CASES.length).toBeGreaterThanOrEqual(80);
    // every kind applies to at least one source
    for (const c of CORRUPTIONS) expect(CASES.some((k) => k.c === c)).toBe(true);
    for (const s of sources()) expect(JSON.stringify(s.raw)).toBe(JSON.stringify(SOURCES.find((x) => x.name === s.name)?.raw));
  });

  it.each(CASES.map((k) => [k.label, k] as const))('%s', async (_label, k) => {
    const value = JSON.parse(k.text) as unknown;
    const r = viewLedger(value);
    if (r.ok) throw new Error('opened a corrupt ledger');
    expect(r.problems.length).toBeGreaterThanOrEqual(1);
    const hit = r.problems.find((p) => k.c.field.test(p.field));
    if (hit === undefined) throw new Error(`no problem at ${String(k.c.field)}; got: ${r.problems.map((p) => p.message).join(' | ')}`);
    expect(hit.detail).toMatch(k.c.detail);
    if (k.c.branch) expect(hit.branch).toBe(k.c.branch(k.edited));
    if (k.c.step) expect(hit.step).toBe(k.c.step(k.edited));
    expect(hit.message).toBe(`${hit.field}${hit.branch !== undefined || hit.step !== undefined ? ` (${[hit.branch !== undefined ? `branch '${hit.branch}'` : '', hit.step !== undefined ? `step ${hit.step}` : ''].filter(Boolean).join(', ')})` : ''}: ${hit.detail}`);
    expect(r.message.length).toBeLessThan(2000);
    // The reader never changes what it read.
    expect(JSON.stringify(value)).toBe(k.text);

    // The engine refuses to resume from it, naming the same problem.
    const replies: EngineReply[] = [];
    const host = new EngineHost(realCore, (reply) => replies.push(reply));
    const spec = typeof (value as { spec?: unknown }).spec === 'string' ? (value as { spec: string }).spec : 'seed: 1\nmodel: { objective: rosenbrock }\n';
    await host.receive({ id: 1, kind: 'load', specText: spec, checkpointEvery: 4, resume: value as object });
    const reply = replies[0];
    if (reply.kind === 'spec-errors') {
      expect(k.c.field.test('spec')).toBe(true);
    } else {
      expect(reply.kind).toBe('failed');
      expect(reply.kind === 'failed' && reply.message).toContain(hit.field);
    }

    // The cell: unreadable, and the metadata untouched after opening and after Shift+Enter.
    const cell = fakeCell(spec, JSON.parse(k.text));
    const c = new CellController({ host: cell, engine: () => new EngineClient(inProcessPort(realCore)), ledger: ledgerGlue, checkSpec: (t) => { const p = parseSpec(t); return p.ok ? [] : p.errors; }, settings: () => DEFAULT_SETTINGS });
    expect(c.state.ledger).toBe('corrupt');
    expect(c.state.ledgerMessage).toContain(hit.field);
    await c.run();
    expect(cell.writes).toBe(0);
    expect(JSON.stringify(cell.metadata)).toBe(k.text);
    c.dispose();
  });
});
