/**
 * The demo notebooks are stepped inside headless Chromium (demo-notebooks/prerun.ts); this
 * replays every stepwell cell's ledger in Node from its spec and seed and requires the stored
 * fingerprint at every checkpoint, the head, and every stored step record bit for bit — the
 * demonstration that a notebook made in the browser verifies in Node. The expected values are
 * what Chromium's V8 computed, an engine independent of Node's (source: the notebooks as
 * written by `npx tsx demo-notebooks/make_demos.ts` in Debian's Chromium).
 */
import * as fs from 'fs';
import * as path from 'path';
import { parseSpec } from '../../../src/experiment';
import { decodeBranch, LEDGER_KEY, validateLedger, type Ledger } from '../../../src/ledger';
import { Session, sameRecord } from '../../../src/core/session';
import { CellGrove } from '../../../src/worker/cell-grove';
import { realCore } from '../../../src/worker/core-adapter';

const DIR = path.resolve(__dirname, '..', '..', '..', 'demo-notebooks');

interface Found {
  where: string;
  ledger: Ledger;
}

/** Every stepwell cell with a ledger in every demo notebook. */
function ledgers(): Found[] {
  const out: Found[] = [];
  for (const file of fs.readdirSync(DIR).filter((f) => f.endsWith('.ipynb')).sort()) {
    const nb = JSON.parse(fs.readFileSync(path.join(DIR, file), 'utf8')) as { cells: { id?: string; metadata?: Record<string, unknown> }[] };
    nb.cells.forEach((cell, i) => {
      const value = cell.metadata?.[LEDGER_KEY];
      if (value === undefined) return;
      const checked = validateLedger(value);
      if (!checked.ok) throw new Error(`${file} cell ${cell.id ?? i}: the ledger does not validate: ${checked.errors.join('; ')}`);
      out.push({ where: `${file} cell ${cell.id ?? i}`, ledger: checked.ledger });
    });
  }
  return out;
}

const found = ledgers();

describe('demo notebooks made in Chromium replay bit for bit in Node', () => {
  it('has the pre-run cells of both demo notebooks, each with a failing root branch and the fix branch', () => {
    // two pre-run cells today: the greenhouse calibration and the parcel sorter
    expect(found.length).toBeGreaterThanOrEqual(2);
    expect(new Set(found.map((f) => f.where.split(' ')[0])).size).toBeGreaterThanOrEqual(2);
    for (const f of found) {
      expect(f.ledger.branches.filter((b) => b.parent === undefined)).toHaveLength(1);
      expect(f.ledger.branches.filter((b) => b.parent !== undefined).length).toBeGreaterThanOrEqual(1);
    }
  });

  it.each(found.map((f) => [f.where, f] as const))('%s: every checkpoint, the head and every record', (_where, f) => {
    const parsed = parseSpec(f.ledger.spec);
    if (!parsed.ok) throw new Error(`the ledger's spec does not parse: ${parsed.errors[0].message}`);
    expect(f.ledger.branches.length).toBeGreaterThanOrEqual(1);
    // Every branch, forks included, through the product's own verify path (the worker's grove).
    const cell = CellGrove.fromLedger(realCore, f.ledger.spec, f.ledger, 25);
    expect(cell.grove.names()).toEqual(f.ledger.branches.map((b) => b.name));
    for (const name of cell.grove.names()) expect([name, cell.grove.replay(name).match]).toEqual([name, 'bit-identical']);
    // The root branch also by hand: a session from spec and seed, compared at every stored checkpoint and record.
    for (const b of f.ledger.branches.filter((x) => x.parent === undefined)) {
      const branch = decodeBranch(f.ledger, b.name);
      const targets = [...branch.checkpoints, branch.head].sort((x, y) => x.step - y.step);
      expect(targets.length).toBeGreaterThanOrEqual(2);
      expect(branch.head.step).toBeGreaterThan(0);
      // Node replay from spec and seed, compared at every stored checkpoint and record.
      const session = Session.create(parsed.experiment);
      const byStep = new Map(branch.trajectory.map((r) => [r.step, r]));
      const first = byStep.get(0);
      if (first !== undefined) expect(sameRecord(session.initialRecord(), first)).toBe(true);
      let records = 0;
      for (const t of targets) {
        while (session.stepCount < t.step) {
          const [rec] = session.step(1);
          const stored = byStep.get(rec.step);
          if (stored !== undefined) {
            expect({ step: rec.step, same: sameRecord(rec, stored) }).toEqual({ step: rec.step, same: true });
            records++;
          }
        }
        expect({ step: t.step, fingerprint: session.fingerprint() }).toEqual({ step: t.step, fingerprint: t.fingerprint });
      }
      expect(records).toBe(branch.trajectory.filter((r) => r.step > 0).length);
    }
  });
});
