/**
 * The walk-in cooler demo (demo-notebooks/walk-in-cooler/), pre-run in headless Chromium with its
 * CSV and safetensors files handed to the cell as the contents API would: its ledger replays bit
 * for bit in Node with the files read from disk, records the hash of the data those files hold,
 * and `stepwell verify` accepts it — and names the change when a CSV value is edited. The expected
 * values are what Chromium's V8 computed (source: the notebook as written by
 * `npx tsx demo-notebooks/walk-in-cooler/make_cooler_demo.ts` in Debian's Chromium).
 */
import { cpSync, mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { parseSpec } from '../../../src/experiment';
import { LEDGER_KEY, validateLedger } from '../../../src/ledger';
import { CellGrove } from '../../../src/worker/cell-grove';
import { realCore } from '../../../src/worker/core-adapter';
import { main } from '../../../src/cli/main';

const DIR = join(__dirname, '../../../demo-notebooks/walk-in-cooler');
const NAMES = ['cooler-start.safetensors', 'cooler-week1.csv', 'cooler-week2.csv'];
const files = new Map(NAMES.map((n) => [n, new Uint8Array(readFileSync(join(DIR, n)))]));
const notebook = JSON.parse(readFileSync(join(DIR, 'walk-in-cooler.ipynb'), 'utf8')) as { cells: { id: string; source: string[]; metadata: Record<string, unknown> }[] };
const cells = notebook.cells.filter((c) => c.metadata[LEDGER_KEY] !== undefined);

/** Runs the CLI in-process; its exit code and what it printed. */
async function cli(args: string[]): Promise<{ code: number; out: string }> {
  let out = '';
  const sink = { write: (s: string) => (out += s) };
  const code = await main(args, sink, sink);
  return { code, out };
}

describe('the walk-in cooler demo', () => {
  it('has one stepwell cell whose spec names the three files beside the notebook', () => {
    expect(cells).toHaveLength(1);
    const spec = cells[0].source.join('');
    for (const n of NAMES) expect(spec).toContain(n);
  });

  it('replays every branch bit for bit in Node from the files on disk, with the recorded data hash', () => {
    const checked = validateLedger(cells[0].metadata[LEDGER_KEY]);
    if (!checked.ok) throw new Error(checked.errors.join('; '));
    const ledger = checked.ledger;
    const parsed = parseSpec(ledger.spec, 'auto', { files });
    if (!parsed.ok) throw new Error(parsed.errors[0].message);
    expect(ledger.dataHash).toBe(parsed.experiment.setup.data?.origin?.hash);
    const cell = CellGrove.fromLedger(realCore, ledger.spec, ledger, 25, { files, problems: new Map() });
    expect(cell.grove.names()).toHaveLength(2);
    expect(ledger.branches[1].parent?.step).toBeGreaterThan(0); // the fix is forked after step 0
    for (const name of cell.grove.names()) expect([name, cell.grove.replay(name).match]).toEqual([name, 'bit-identical']);
  });

  it('verifies with stepwell verify, and names the data hash when a CSV value was edited', async () => {
    const ok = await cli(['verify', join(DIR, 'walk-in-cooler.ipynb')]);
    expect(ok.out).toContain('bit-identical');
    expect(ok.code).toBe(0);
    const copy = mkdtempSync(join(tmpdir(), 'cooler-'));
    cpSync(DIR, copy, { recursive: true });
    const csv = readFileSync(join(copy, 'cooler-week1.csv'), 'utf8').split('\n');
    csv[1] = csv[1].replace(/,([0-9.]+)$/, (_m, kw: string) => `,${(Number(kw) + 0.01).toFixed(2)}`);
    writeFileSync(join(copy, 'cooler-week1.csv'), csv.join('\n'));
    const edited = await cli(['verify', join(copy, 'walk-in-cooler.ipynb')]);
    expect(edited.code).not.toBe(0);
    expect(edited.out).toMatch(/data\s+CHANGED since the ledger was written: data hash 6fa0dfe2928c[0-9a-f]+ in the ledger, [0-9a-f]{64} now/);
    expect(edited.out).toContain('main    differs from step 0');
  });
});
