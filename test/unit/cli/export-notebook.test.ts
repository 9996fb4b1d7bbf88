/**
 * `stepwell export NOTEBOOK --cell N [--branch NAME]`: what a cell's ledger recorded, written for
 * other tools and read back with the project's readers (checked against NumPy and safetensors in
 * `test/reference/data/`): the stored records as CSV, .npy and .safetensors, the tip's weights and
 * those of an earlier step. Expected values are the ledger decoded independently (the demo
 * notebook as Chromium wrote it) and, for a step between checkpoints, a run from spec and seed.
 */
import { readFileSync } from 'fs';
import { join } from 'path';
import { main } from '../../../src/cli/main';
import { readCsv, readNpy, readSafetensors } from '../../../src/core/data';
import { Session, fingerprintState } from '../../../src/core/session';
import { patchChainExperiment } from '../../../src/experiment/patch';
import { decodeBranch, validateLedger, type Ledger } from '../../../src/ledger';
import { kilnNotebook, ledgerCell, readNb, tempDir, DEMOS } from './notebooks';

async function cli(...args: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = '';
  let err = '';
  const code = await main(args, { write: (s: string) => (out += s) }, { write: (s: string) => (err += s) });
  return { code, out, err };
}

const GH = join(DEMOS, 'greenhouse-humidity-sensor.ipynb');
const dir = tempDir('export-nb');
const ledger = ((): Ledger => {
  const v = validateLedger(ledgerCell(readNb(GH)).metadata.stepwell);
  if (!v.ok) throw new Error(v.errors.join('; '));
  return v.ledger;
})();
const bytes = (p: string): Uint8Array => new Uint8Array(readFileSync(p));

describe('export from a notebook cell', () => {
  it('--csv prints the stored records of the branch (its parent’s before the fork), every number bit for bit', async () => {
    const r = await cli('export', GH, '--cell', '2', '--branch', 'lr=0.662', '--csv');
    expect(r).toMatchObject({ code: 0, err: '' });
    const table = readCsv(new TextEncoder().encode(r.out));
    const b = decodeBranch(ledger, 'lr=0.662');
    expect(table.header).toEqual(['step', 'loss', 'batchLoss', 'heldOutLoss', 'gradNorm', 'updateNorm', 'lr', 'evaluations']);
    expect(table.rows.length).toBe(b.trajectory.length);
    expect(b.trajectory.length).toBe(61);
    table.rows.forEach((row, i) => {
      const rec = b.trajectory[i];
      expect([Number(row[0]), Number(row[1]), Number(row[4]), Number(row[6])]).toEqual([rec.step, rec.loss, rec.gradNorm, rec.lr]);
      expect(Number(row[3])).toBe(rec.heldOutLoss);
    });
    // Record 0 has no batch loss (no update yet): an empty cell, not a number.
    expect(table.rows[0][2]).toBe('');
  });

  it('--to trajectory as .npy and .safetensors: the same columns', async () => {
    const b = decodeBranch(ledger, 'main');
    const npy = join(dir, 'main.npy');
    expect((await cli('export', GH, '--branch', 'main', '--to', 'trajectory', '--out', npy)).out).toBe('columns: step, loss, batchLoss, heldOutLoss, gradNorm, updateNorm, lr, evaluations\n');
    const a = readNpy(bytes(npy));
    expect(a.shape).toEqual([b.trajectory.length, 8]);
    expect(Array.from({ length: b.trajectory.length }, (_, i) => a.data[i * 8 + 1])).toEqual(b.trajectory.map((r) => r.loss));
    const st = join(dir, 'main.safetensors');
    await cli('export', GH, '--branch', 'main', '--to', 'trajectory', '--out', st);
    const t = readSafetensors(bytes(st));
    expect(Array.from(t.get('loss')!.data)).toEqual(b.trajectory.map((r) => r.loss));
    expect(Array.from(t.get('step')!.data)).toEqual(b.trajectory.map((r) => r.step));
  });

  it('--to weights: the tip’s stored weights (safetensors named like the Sequential’s state_dict, flat .npy)', async () => {
    const b = decodeBranch(ledger, 'lr=0.662');
    const st = join(dir, 'tip.safetensors');
    expect((await cli('export', GH, '--branch', 'lr=0.662', '--to', 'weights', '--out', st)).code).toBe(0);
    const t = readSafetensors(bytes(st));
    expect([...t.keys()]).toEqual(['0.weight', '0.bias', '2.weight', '2.bias']);
    expect([...t.values()].flatMap((v) => Array.from(v.data))).toEqual(Array.from(b.head.state.params));
    const npy = join(dir, 'tip.npy');
    await cli('export', GH, '--branch', 'lr=0.662', '--to', 'weights', '--out', npy);
    expect(Array.from(readNpy(bytes(npy)).data)).toEqual(Array.from(b.head.state.params));
  });

  it('--steps K between checkpoints: rebuilt from the nearest stored state, equal to a run from spec and seed', async () => {
    const st = join(dir, 'w37.safetensors');
    expect((await cli('export', GH, '--branch', 'lr=0.662', '--to', 'weights', '--steps', '37', '--out', st)).code).toBe(0);
    const e = patchChainExperiment(ledger.spec, [{ lr: 0.662 }]);
    if (!e.ok) throw new Error('spec');
    const s = Session.create(e.experiment);
    s.step(37);
    const t = readSafetensors(bytes(st));
    expect([...t.values()].flatMap((v) => Array.from(v.data))).toEqual(Array.from(s.parameters));
    // The fingerprint the file carries in its metadata is the run's.
    const header = JSON.parse(Buffer.from(bytes(st).subarray(8, 8 + Number(new DataView(bytes(st).buffer).getBigUint64(0, true)))).toString('utf8'));
    expect(header.__metadata__).toMatchObject({ steps: '37', fingerprint: s.fingerprint() });
    expect(fingerprintState(s.state())).toBe(s.fingerprint());
  });

  it('the kiln notebook: files relative to the notebook; a branch forked at step 12 exports weights, records and a script that starts at the fork', async () => {
    const d = tempDir('export-kiln');
    const { path } = kilnNotebook(d);
    const v = validateLedger(ledgerCell(readNb(path)).metadata.stepwell);
    if (!v.ok) throw new Error('ledger');
    const slower = decodeBranch(v.ledger, 'slower');
    const npy = join(d, 'slower.npy');
    expect((await cli('export', path, '--branch', 'slower', '--to', 'weights', '--out', npy)).code).toBe(0);
    expect(Array.from(readNpy(bytes(npy)).data)).toEqual(Array.from(slower.head.state.params));
    // A script of a branch forked later starts from the state the ledger stored at the fork
    // (test/reference/export/roundtrip-forks.test.ts runs such scripts in torch).
    const slowerPy = join(d, 'slower.py');
    expect((await cli('export', path, '--branch', 'slower', '--out', slowerPy)).code).toBe(0);
    expect(readFileSync(slowerPy, 'utf8')).toContain('# Starts at step 12, where the branch was forked, from the state the ledger stored there');
    expect(readFileSync(slowerPy, 'utf8')).toContain('START_STEP = 12');
    const script = join(d, 'standardized.py');
    expect((await cli('export', path, '--out', script)).code).toBe(0);
    const text = readFileSync(script, 'utf8');
    expect(text).toContain(`from ${path} cell 1 branch standardized`);
    expect(text).toContain('kiln-firings.csv');
  });

  it('refuses what it cannot do, naming the flag, the cell or the branch', async () => {
    expect(await cli('export', GH, '--set', 'lr=0.1', '--csv')).toMatchObject({ code: 2, err: expect.stringContaining('--set applies to a spec file') });
    expect(await cli('export', GH, '--branch', 'fast', '--csv')).toMatchObject({ code: 2, err: expect.stringContaining("no branch is named 'fast' (branches: main, lr=0.662)") });
    expect(await cli('export', GH, '--branch', 'main', '--to', 'weights', '--steps', '15', '--out', join(dir, 'x.npy'))).toMatchObject({ code: 2, err: expect.stringContaining("--steps 15 is beyond the branch's tip (step 14)") });
    expect(await cli('export', GH, '--csv', '--to', 'weights')).toMatchObject({ code: 2, err: expect.stringContaining('--csv writes the trajectory') });
    expect(await cli('export', GH, '--csv', '--out', join(dir, 'x.npy'))).toMatchObject({ code: 2, err: expect.stringContaining('--csv writes CSV') });
  });
});
