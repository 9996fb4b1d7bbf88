/**
 * `stepwell export` to weights and trajectories, and its refusals. Expected values come from
 * `stepwell run --json` on the same spec (the command under test must agree with the engine),
 * and the written files are read back with the readers tested against NumPy / safetensors.
 */
import { mkdtempSync, readFileSync, writeFileSync } from 'fs';
import { tmpdir } from 'os';
import { join } from 'path';
import { exportCommand } from '../../../src/cli/export';
import { runCommand } from '../../../src/cli/run';
import { CliError } from '../../../src/cli/io';
import { readNpy, readSafetensors } from '../../../src/core/data';

const dir = mkdtempSync(join(tmpdir(), 'stepwell-export-cli-'));
const SPEC = join(dir, 'spec.yaml');
writeFileSync(SPEC, `seed: 4
model: { inputs: 2, layers: [{ units: 3, activation: tanh }, { units: 1 }] }
data: { x: [[0.1, 0.2], [0.5, -0.3], [-0.4, 0.9], [0.7, 0.7]], y: [0.3, -0.1, 0.6, 0.2] }
recipe: { optimizer: adam, lr: 0.05 }
`);
const run = JSON.parse(runCommand(SPEC, { steps: '6', json: true }).out) as { trajectory: { loss: number; lr: number }[]; final: { parameters: number[] } };

describe('stepwell export --to weights / trajectory', () => {
  it('writes the final weights as safetensors named like the Sequential state_dict, and as a flat .npy', () => {
    const st = join(dir, 'w.safetensors');
    exportCommand(SPEC, { to: 'weights', steps: '6', out: st });
    const t = readSafetensors(new Uint8Array(readFileSync(st)));
    expect([...t.keys()]).toEqual(['0.weight', '0.bias', '2.weight', '2.bias']);
    expect(t.get('0.weight')!.shape).toEqual([3, 2]);
    const flat = [...t.values()].flatMap((v) => Array.from(v.data));
    expect(flat).toEqual(run.final.parameters);
    const npy = join(dir, 'w.npy');
    exportCommand(SPEC, { to: 'weights', steps: '6', out: npy });
    expect(Array.from(readNpy(new Uint8Array(readFileSync(npy))).data)).toEqual(run.final.parameters);
  });
  it('exported weights start a spec exactly where the run ended', () => {
    const st = join(dir, 'end.safetensors');
    exportCommand(SPEC, { to: 'weights', steps: '6', out: st });
    const spec2 = join(dir, 'continue.yaml');
    writeFileSync(spec2, readFileSync(SPEC, 'utf8').replace('layers: [{ units: 3, activation: tanh }, { units: 1 }] }', 'layers: [{ units: 3, activation: tanh }, { units: 1 }], weights: { file: end.safetensors } }'));
    const again = JSON.parse(runCommand(spec2, { steps: '0', json: true }).out) as { final: { parameters: number[] } };
    expect(again.final.parameters).toEqual(run.final.parameters);
  });
  it('writes the trajectory as CSV (N + 1 rows) and .npy', () => {
    const csv = join(dir, 't.csv');
    exportCommand(SPEC, { to: 'trajectory', steps: '6', out: csv });
    const lines = readFileSync(csv, 'utf8').trim().split('\n');
    expect(lines[0]).toBe('step,loss,batchLoss,gradNorm,updateNorm,lr,evaluations');
    expect(lines.length).toBe(8);
    expect(lines.slice(1).map((l) => Number(l.split(',')[1]))).toEqual(run.trajectory.map((r) => r.loss));
    const npy = join(dir, 't.npy');
    expect(exportCommand(SPEC, { to: 'trajectory', steps: '6', out: npy }).out).toBe('columns: step, loss, batchLoss, gradNorm, updateNorm, lr, evaluations\n');
    expect(readNpy(new Uint8Array(readFileSync(npy))).shape).toEqual([7, 7]);
  });
  it('refuses what PyTorch cannot express, saying why', () => {
    expect(() => exportCommand(SPEC, { set: ['optimizer=cg'] })).toThrow(new CliError(`${SPEC}: recipe.optimizer 'cg' has no torch.optim counterpart, so it cannot be exported; sgd, adagrad, rmsprop, adam, adamw and lbfgs can`));
    expect(() => exportCommand(SPEC, { to: 'weights', steps: '2', out: join(dir, 'w.bin') })).toThrow(/weights are written as .safetensors/);
    expect(exportCommand(SPEC, { branch: '0:lr=0.01' }).out).toContain('lr=0.01');
  });

  it('a spec file\'s --branch S:… with S > 0 starts from the trunk run to step S (the state `stepwell run --branch` forks from)', () => {
    const script = exportCommand(SPEC, { branch: '3:lr=0.01' }).out;
    expect(script).toContain('# Starts at step 3, where the branch was forked, from the state of the trunk run from the spec to that step');
    expect(script).toContain('START_STEP = 3');
    expect(script).toContain('lr=0.01');
    expect(script).toContain('"exp_avg"');
    // the embedded starting weights are the trunk's after 3 updates (printed exactly, as Python floats)
    const trunk = JSON.parse(runCommand(SPEC, { steps: '3', json: true }).out) as { final: { parameters: number[] } };
    expect(trunk.final.parameters).toHaveLength(13);
    const embedded = /model\.load_state_dict\(\{([\s\S]*?)\}\)/.exec(script)?.[1] ?? '';
    const numbers = (embedded.match(/-?\d+(?:\.\d+)?(?:e[+-]?\d+)?(?=[,\s\]])/g) ?? []).map(Number);
    for (const w of trunk.final.parameters) expect(numbers).toContain(w);
  });

  it('refuses a spec file\'s --branch S:… that changes the setup after step 0, or forks past a diverged trunk', () => {
    expect(() => exportCommand(SPEC, { branch: '3:seed=5' })).toThrow(new CliError('--branch 3:seed=5: seed=5 changes the setup or the seed, so it must fork at step 0 (0:KEY=VALUE), not step 3'));
    expect(() => exportCommand(SPEC, { set: ['optimizer=sgd', 'lr=1e200'], branch: '5:lr=0.01' })).toThrow(/the trunk diverged at step 1 \(loss Infinity\), before the fork step 5: fork earlier/);
  });
});
