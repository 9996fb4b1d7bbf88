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
import { staticDiagnosis } from '../../../src/worker/diagnosis';
import type { Finding } from '../../../src/worker/protocol';

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

  // What the notebook shows after a reload is what the product stored; it must be what today's
  // code computes from the same ledger, or the prose and the cell drift apart. Numbers to 1e-9
  // relative: Chromium's Math functions may differ from Node's in the last bits (source: the
  // ECMAScript spec leaves Math.exp, Math.tanh … implementation-approximated).
  it.each(found.map((f) => [f.where, f] as const))('%s: the stored findings and diagnosis readouts are what the code computes now', (_where, f) => {
    const cell = CellGrove.fromLedger(realCore, f.ledger.spec, f.ledger, 25);
    const names = cell.grove.names();
    expect(names.length).toBe(f.ledger.branches.length);
    const shape = (x: Finding): unknown => ({ ...x, measured: undefined, threshold: undefined });
    for (const name of names) {
      const stored = cell.readoutsOf(name);
      const storedFindings = stored.findings.slice();
      const storedNow = stored.activations.now;
      const statics = staticDiagnosis(cell.grove.experiment(name));
      expect([name, statics.init]).toEqual([name, stored.init]);
      expect([name, statics.data]).toEqual([name, stored.data]);
      cell.diagnose(name);
      const now = cell.readoutsOf(name).findings;
      expect(now.length).toBe(storedFindings.length);
      expect([name, now.map(shape)]).toEqual([name, storedFindings.map(shape)]);
      now.forEach((x, i) => {
        for (const k of ['measured', 'threshold'] as const) {
          const a = x[k];
          const b = storedFindings[i][k];
          expect({ name, id: x.id, k, close: a === b || Math.abs(a - b) <= 1e-9 * Math.max(Math.abs(a), Math.abs(b)) }).toEqual({ name, id: x.id, k, close: true });
        }
      });
      expect([name, cell.readoutsOf(name).activations.now]).toEqual([name, storedNow]);
    }
  });
});

