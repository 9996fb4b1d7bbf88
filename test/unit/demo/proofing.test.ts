/**
 * The dough-proofing demo (demo-notebooks/dough-proofing/): a hidden layer with the user's own
 * activation as a formula, pre-run in headless Chromium with every deeper readout taken. Its
 * ledger replays bit for bit in Node, `stepwell verify` accepts it, its kept deeper readouts read
 * back whole (each at the step it was taken), and each equals what the current code computes at
 * that step (source: the notebook as written by
 * `npx tsx demo-notebooks/dough-proofing/make_proofing_demo.ts` in Debian's Chromium; the
 * readouts' own numbers have their outside checks in test/unit/probe).
 */
import { mkdtempSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { LEDGER_KEY, validateLedger } from '../../../src/ledger';
import { CellGrove } from '../../../src/worker/cell-grove';
import { realCore } from '../../../src/worker/core-adapter';
import { main } from '../../../src/cli/main';
import { deeperTask } from '../../../src/core/probe/readouts-at';
import { DEEPER_KINDS, thinDeeper } from '../../../src/worker/deeper';
import { runUnits, type UnitTask } from '../../../src/core/probe/unit-task';

const DIR = join(__dirname, '../../../demo-notebooks/dough-proofing');
const notebook = JSON.parse(readFileSync(join(DIR, 'dough-proofing.ipynb'), 'utf8')) as { cells: { id: string; source: string[]; metadata: Record<string, unknown> }[] };
const cells = notebook.cells.filter((c) => c.metadata[LEDGER_KEY] !== undefined);

async function cli(args: string[]): Promise<{ code: number; out: string }> {
  let out = '';
  const sink = { write: (s: string) => (out += s) };
  const code = await main(args, sink, sink);
  return { code, out };
}

describe('the dough-proofing demo', () => {
  it('has one stepwell cell whose hidden layer uses a formula activation with its derivative', () => {
    expect(cells).toHaveLength(1);
    expect(cells[0].source.join('')).toMatch(/activation: \{ expr: "x \/ \(1 \+ abs\(x\)\)", derivative: "1 \/ \(1 \+ abs\(x\)\)\^2" \}/);
  });

  it('verifies with stepwell verify', async () => {
    const r = await cli(['verify', join(DIR, 'dough-proofing.ipynb')]);
    expect(r.out).toContain('verified: 2 branches in 1 cell bit-identical');
    expect(r.code).toBe(0);
  });

  it('stepwell report draws its kept deeper readouts, each saying where it was taken', async () => {
    const out = join(mkdtempSync(join(tmpdir(), 'proofing-')), 'report.html');
    const r = await cli(['report', join(DIR, 'dough-proofing.ipynb'), '--out', out]);
    expect(r.out).toContain('1 cell, 5 figures; verification: bit-identical');
    const html = readFileSync(out, 'utf8');
    const titles = ['Loss along the update', 'Loss over a plane (filter-normalized random directions)', 'Learning-rate range test', 'Batch sizes by examples seen'];
    expect(titles).toHaveLength(4);
    for (const t of titles) expect(html).toContain(`${t}. Branch main, taken at step 60.`);
  });

  it('keeps the five deeper readouts on main, each equal to what the current code computes at its step', () => {
    const checked = validateLedger(cells[0].metadata[LEDGER_KEY]);
    if (!checked.ok) throw new Error(checked.errors.join('; '));
    const cell = CellGrove.fromLedger(realCore, checked.ledger.spec, checked.ledger, 25);
    const kept = cell.readoutsView('main').deeper;
    expect(Object.keys(kept).sort()).toEqual([...DEEPER_KINDS].sort());
    const session = cell.grove.session('main');
    const requests = {
      line: { what: 'line', points: 41 },
      range: { what: 'range', from: 1e-3, to: 30, steps: 40 },
      batch: { what: 'batch', sizes: [2, 4, 12], examples: 240 },
      precision: { what: 'precision', bits: [16, 10, 8, 6, 4] }
    } as const;
    const entries = Object.entries(requests);
    expect(entries).toHaveLength(4);
    for (const [what, request] of entries) {
      const r = kept[what as keyof typeof kept];
      expect(r?.step).toBe(60);
      const now = runUnits(deeperTask(session, request) as UnitTask<ReturnType<ReturnType<typeof deeperTask>['result']>>);
      expect(now === null ? null : thinDeeper(now)).toEqual(r);
    }
    // the plane projects the checkpoints, which a resumed cell holds only in part: its grid is compared
    expect(kept.plane?.result.alpha).toHaveLength(21);
    expect(kept.plane?.result.loss.every((row) => row.length === 21 && row.every((v) => Number.isFinite(v)))).toBe(true);
  });
});
