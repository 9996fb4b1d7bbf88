/**
 * Export of an experiment whose data come from a parquet file: the script embeds the numbers
 * Stepwell read (reading parquet in Python would need pyarrow, which the export does not assume),
 * and PyPI torch 2.13.0 running it reproduces `stepwell run`'s losses (1e-9 relative, as
 * roundtrip.test.ts). The data file is a pyarrow-written fixture (test/reference/parquet).
 */
import { execFileSync } from 'child_process';
import { copyFileSync, existsSync, mkdtempSync, writeFileSync } from 'fs';
import { tmpdir } from 'os';
import { join } from 'path';
import { exportCommand } from '../../../src/cli/export';
import { runCommand } from '../../../src/cli/run';

const ROOT = join(__dirname, '../../..');
const PYTHON = join(ROOT, '.venv-torch/bin/python');

describe('export of a spec reading a parquet file (PyPI torch 2.13.0)', () => {
  it('embeds the numbers read and matches stepwell run over 20 steps', () => {
    if (!existsSync(PYTHON)) throw new Error(`the export venv is missing (${PYTHON}); create it with: bash test/reference/export/make-venv.sh`);
    const dir = mkdtempSync(join(tmpdir(), 'stepwell-export-parquet-'));
    copyFileSync(join(ROOT, 'test/reference/parquet/fixtures/labels-snappy.parquet'), join(dir, 'cold-room.parquet'));
    const spec = join(dir, 'spec.yaml');
    writeFileSync(spec, 'seed: 3\nmodel: { inputs: 2, layers: [{ units: 4, activation: tanh }, { units: 3 }] }\ndata: { file: cold-room.parquet, target: state, standardize: true }\nloss: cross-entropy\nrecipe: { optimizer: adam, lr: 0.05, batch: 4 }\n');
    const script = join(dir, 'train.py');
    exportCommand(spec, { out: script });
    const got = JSON.parse(execFileSync(PYTHON, [script, '--steps', '20', '--json'], { encoding: 'utf8' })) as { losses: number[] };
    const want = (JSON.parse(runCommand(spec, { steps: '20', json: true }).out) as { trajectory: { loss: number }[] }).trajectory.map((r) => r.loss);
    expect(want).toHaveLength(21);
    expect(got.losses).toHaveLength(21);
    // source: PyPI torch 2.13.0+cpu running the exported script
    const worst = Math.max(...want.map((w, k) => Math.abs(got.losses[k] - w) / Math.abs(w)));
    expect(worst).toBeLessThanOrEqual(1e-9);
  });
});
