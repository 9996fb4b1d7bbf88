/**
 * Exports from a notebook cell, checked by outside tools (the pinned venv of
 * test/reference/export/make-venv.sh: PyPI torch 2.13.0 CPU, numpy 2.4.6, safetensors 0.8.0):
 *
 * - NumPy (`numpy.load`), safetensors (`safetensors.numpy.load_file`) and Python's `csv` module
 *   read the weights and the trajectory `stepwell export NOTEBOOK --cell N` wrote, and every number
 *   equals the ledger's, bit for bit (Python's float repr and JSON.parse are both exact);
 * - the PyTorch script exported from a notebook branch reproduces the losses the ledger stored —
 *   numbers computed in headless Chromium for the greenhouse demo, in Node for the kiln notebook
 *   (files read relative to the notebook) — to 1e-9 relative at every step, as the spec export's
 *   round trip requires (see roundtrip.test.ts for why 1e-9).
 */
import { execFileSync } from 'child_process';
import { existsSync } from 'fs';
import { join } from 'path';
import { exportCommand } from '../../../src/cli/export';
import { decodeBranch, validateLedger, type Ledger } from '../../../src/ledger';
import { kilnNotebook, ledgerCell, readNb, tempDir, DEMOS, ROOT } from '../../unit/cli/notebooks';

const PYTHON = join(ROOT, '.venv-torch/bin/python');
const GH = join(DEMOS, 'greenhouse-humidity-sensor.ipynb');

function ledgerOf(path: string): Ledger {
  const v = validateLedger(ledgerCell(readNb(path)).metadata.stepwell);
  if (!v.ok) throw new Error(v.errors.join('; '));
  return v.ledger;
}

function python(code: string, ...args: string[]): string {
  return execFileSync(PYTHON, ['-c', code, ...args], { encoding: 'utf8', maxBuffer: 64 << 20, env: { ...process.env, PYTHONWARNINGS: 'ignore' } });
}

/** Largest relative difference of two loss lists of equal length. */
function worst(a: readonly number[], b: readonly number[]): number {
  expect(a.length).toBe(b.length);
  return Math.max(...a.map((x, i) => Math.abs(x - b[i]) / Math.abs(b[i])));
}

describe('notebook exports read by NumPy, safetensors and PyTorch', () => {
  const dir = tempDir('export-nb-ref');
  it('has the export venv', () => {
    if (!existsSync(PYTHON)) throw new Error(`the export venv is missing (${PYTHON}); create it with: bash test/reference/export/make-venv.sh`);
  });

  it('weights (.npy, .safetensors) and trajectory (.csv, .npy, .safetensors) equal the ledger bit for bit', () => {
    const ledger = ledgerOf(GH);
    const b = decodeBranch(ledger, 'lr=0.662');
    const out = (f: string): string => join(dir, f);
    exportCommand(GH, { cell: '2', branch: 'lr=0.662', to: 'weights', out: out('w.npy') });
    exportCommand(GH, { cell: '2', branch: 'lr=0.662', to: 'weights', out: out('w.safetensors') });
    exportCommand(GH, { cell: '2', branch: 'lr=0.662', to: 'trajectory', out: out('t.npy') });
    exportCommand(GH, { cell: '2', branch: 'lr=0.662', to: 'trajectory', out: out('t.safetensors') });
    exportCommand(GH, { cell: '2', branch: 'lr=0.662', csv: true, out: out('t.csv') });
    // source: numpy 2.4.6, safetensors 0.8.0 and Python's csv module reading the files
    const text = python(
      [
        'import csv, json, sys, numpy as np',
        'from safetensors.numpy import load_file',
        'd = sys.argv[1]',
        'w = np.load(d + "/w.npy")',
        'st = load_file(d + "/w.safetensors")',
        'flat = np.concatenate([st[k].reshape(-1) for k in ["0.weight", "0.bias", "2.weight", "2.bias"]])',
        't = np.load(d + "/t.npy")',
        'ts = load_file(d + "/t.safetensors")',
        'rows = list(csv.DictReader(open(d + "/t.csv")))',
        'print(json.dumps({"npy": w.tolist(), "dtype": str(w.dtype), "st": flat.tolist(), "shapes": {k: list(v.shape) for k, v in st.items()},',
        '  "tloss": t[:, 1].tolist(), "tsloss": ts["loss"].tolist(), "csvloss": [float(r["loss"]) for r in rows], "csvheld": [float(r["heldOutLoss"]) for r in rows]}))'
      ].join('\n'),
      dir
    );
    const got = JSON.parse(text) as Record<string, unknown>;
    const params = Array.from(b.head.state.params);
    const losses = b.trajectory.map((r) => r.loss);
    expect(got.dtype).toBe('float64');
    expect(got.npy).toEqual(params);
    expect(got.st).toEqual(params);
    expect(got.shapes).toEqual({ '0.weight': [8, 2], '0.bias': [8], '2.weight': [1, 8], '2.bias': [1] });
    expect(got.tloss).toEqual(losses);
    expect(got.tsloss).toEqual(losses);
    expect(got.csvloss).toEqual(losses);
    expect(got.csvheld).toEqual(b.trajectory.map((r) => r.heldOutLoss));
  });

  it('the script of a notebook branch reproduces the losses its ledger stored (greenhouse: Chromium; kiln: files, mini-batches, Adam, warm-up, cosine)', () => {
    const kilnDir = tempDir('export-nb-kiln');
    const kiln = kilnNotebook(kilnDir);
    // source: PyTorch 2.13.0+cpu from PyPI running the exported script
    const cases: { path: string; branch: string; steps: number }[] = [
      { path: GH, branch: 'lr=0.662', steps: 60 },
      { path: GH, branch: 'main', steps: 14 },
      { path: kiln.path, branch: 'standardized', steps: 30 },
      { path: kiln.path, branch: 'main', steps: 30 }
    ];
    const measured: string[] = [];
    for (const c of cases) {
      const script = join(c.path === GH ? dir : kilnDir, `${c.branch.replace(/\W/g, '_')}.py`);
      exportCommand(c.path, { branch: c.branch, out: script });
      const out = execFileSync(PYTHON, [script, '--steps', String(c.steps), '--json'], { encoding: 'utf8', cwd: c.path === GH ? dir : kilnDir, env: { ...process.env, PYTHONWARNINGS: 'ignore' } });
      const torch = (JSON.parse(out) as { losses: number[] }).losses;
      const stored = decodeBranch(ledgerOf(c.path), c.branch).trajectory;
      expect(stored.map((r) => r.step)).toEqual(Array.from({ length: c.steps + 1 }, (_, i) => i));
      const w = worst(torch, stored.map((r) => r.loss));
      measured.push(`${c.branch} (${c.path === GH ? 'greenhouse' : 'kiln'}): ${w.toExponential(2)}`);
      expect([c.branch, w <= 1e-9]).toEqual([c.branch, true]);
    }
    process.stdout.write(`notebook branch scripts against the stored losses, largest relative difference: ${measured.join('; ')}\n`);
  }, 120_000);
});
