/**
 * The export round trip for branches forked after step 0: a cell is stepped, a branch forked at a
 * later step with a patch (as the app does: the cell controller over the real engine host), the
 * ledger saved in a notebook; `stepwell export NOTEBOOK --branch B` writes a script that starts
 * from the state the ledger stored at the fork (weights, optimizer buffers and update count, the
 * schedules' position — L-BFGS memory and reduce-on-plateau counters included —, the batch
 * generator and the epoch's row order); PyPI torch 2.13.0 runs it,
 * and its losses — and held-out losses — must equal the branch's stored records from the fork
 * step on, to 1e-9 relative (the tolerance of roundtrip.test.ts, for the same reasons).
 *
 * Networks and data are invented here; the reference is PyTorch itself running the script.
 */
import { execFileSync } from 'child_process';
import { existsSync, mkdtempSync, writeFileSync } from 'fs';
import { tmpdir } from 'os';
import { join } from 'path';
import { exportCommand } from '../../../src/cli/export';
import { runCommand } from '../../../src/cli/run';
import { notebookBranch } from '../../../src/cli/export-notebook';
import { CellController } from '../../../src/ui/controller';
import type { CellHost } from '../../../src/ui/ports';
import { DEFAULT_SETTINGS } from '../../../src/ui/ports';
import { ledgerGlue } from '../../../src/ui/ledger-glue';
import { checkSpec } from '../../../src/plugin/registry';
import { EngineClient } from '../../../src/worker/client';
import { inProcessPort } from '../../../src/worker/in-process';
import { realCore } from '../../../src/worker/core-adapter';

const ROOT = join(__dirname, '../../..');
const PYTHON = join(ROOT, '.venv-torch/bin/python');
const TOL = 1e-9;

/** Invented rows: a fixed linear-congruential sequence. */
function rows(n: number, inputs: number, seed: number): { x: number[][]; y: number[][] } {
  let s = seed >>> 0;
  const r = (): number => {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    return Math.round(((s / 2 ** 32) * 4 - 2) * 1e4) / 1e4;
  };
  const x = Array.from({ length: n }, () => Array.from({ length: inputs }, r));
  return { x, y: x.map((row) => [Math.round(Math.tanh(row[0] - 0.5 * row[1] + 0.3 * row[2]) * 1e4) / 1e4]) };
}

const TRAIN = rows(26, 3, 21);
const HELD = rows(9, 3, 22);
const spec = (recipe: string): string =>
  `# stepwell\nseed: 4\nmodel: { inputs: 3, layers: [{ units: 5, activation: tanh }, { units: 1 }] }\ndata: { x: ${JSON.stringify(TRAIN.x)}, y: ${JSON.stringify(TRAIN.y)}, heldOut: { x: ${JSON.stringify(HELD.x)}, y: ${JSON.stringify(HELD.y)} } }\nloss: mse\nrecipe: ${recipe}\n`;

type Case = { name: string; recipe: string; before: number; fork: Record<string, unknown>; after: number; from?: { fork: Record<string, unknown>; at: number; steps: number }; tol?: number; reduced?: boolean };
// L-BFGS: 1e-6 relative, as roundtrip.test.ts (torch's strong-Wolfe interpolation and the
// history's dot products round differently from Stepwell's; differences grow along the run)
const TOL_LBFGS = 1e-6;
const CASES: Case[] = [
  { name: 'sgd-momentum-minibatch-warmup-cosine', recipe: '{ optimizer: sgd, lr: 0.1, momentum: 0.9, batch: 7, warmup: 3, schedule: { kind: cosine, steps: 30, floor: 0.1 } }', before: 9, fork: { lr: 0.05 }, after: 20 },
  { name: 'adam-amsgrad-minibatch-step', recipe: '{ optimizer: adam, lr: 0.02, amsgrad: true, batch: 5, schedule: { kind: step, every: 6, factor: 0.5 } }', before: 8, fork: { beta2: 0.99 }, after: 20 },
  { name: 'adamw-groups-no-bias-decay', recipe: '{ optimizer: adamw, lr: 0.02, weightDecay: 0.1, decayBiases: false, layers: [{ lrScale: 1.5 }, { lrScale: 0.5 }] }', before: 6, fork: { lr: 0.01 }, after: 20 },
  { name: 'rmsprop-centered-momentum', recipe: '{ optimizer: rmsprop, lr: 0.003, centered: true, momentum: 0.5 }', before: 5, fork: { lr: 0.002 }, after: 20 },
  { name: 'adagrad-lr-decay-clip', recipe: '{ optimizer: adagrad, lr: 0.1, lrDecay: 0.02, clipNorm: 0.5 }', before: 7, fork: { clipNorm: 0.2 }, after: 20 },
  { name: 'adam-to-sgd-momentum', recipe: '{ optimizer: adam, lr: 0.02 }', before: 6, fork: { optimizer: 'sgd', lr: 0.05, momentum: 0.9 }, after: 20 },
  // a branch of a branch: forked at 10 from a branch forked at 4
  // L-BFGS resumed from its stored memory: the history (wrapped around the ring at history 3),
  // the last direction and step length, H0's scale and the previous gradient
  { name: 'lbfgs-strong-wolfe', recipe: '{ optimizer: lbfgs, lr: 1, lineSearch: strong-wolfe, history: 3 }', before: 6, fork: { lr: 0.7 }, after: 20, tol: TOL_LBFGS },
  { name: 'lbfgs-fixed-step-max-iter', recipe: '{ optimizer: lbfgs, lr: 0.2, lineSearch: none, maxIter: 3, history: 4 }', before: 5, fork: { lr: 0.15 }, after: 20, tol: TOL_LBFGS },
  // reduce-on-plateau resumed with its best loss, counters and reduced rate (reduced before the fork: checked below)
  { name: 'sgd-momentum-plateau', recipe: '{ optimizer: sgd, lr: 0.3, momentum: 0.9, schedule: { kind: plateau, factor: 0.5, patience: 0, cooldown: 2, threshold: 0.1 } }', before: 10, fork: { momentum: 0.5 }, after: 20, reduced: true },
  { name: 'adam-warmup-plateau-groups', recipe: '{ optimizer: adam, lr: 0.08, warmup: 4, layers: [{ lrScale: 1.5 }, { lrScale: 0.5 }], schedule: { kind: plateau, factor: 0.5, patience: 0, threshold: 0.05, floor: 0.3 } }', before: 10, fork: { beta1: 0.8 }, after: 20, reduced: true },
  { name: 'lbfgs-plateau', recipe: '{ optimizer: lbfgs, lr: 1, lineSearch: none, history: 5, schedule: { kind: plateau, factor: 0.5, patience: 0, threshold: 0.5 } }', before: 6, fork: { lr: 0.8 }, after: 20, tol: TOL_LBFGS, reduced: true },
  { name: 'nested-fork-nesterov', recipe: '{ optimizer: sgd, lr: 0.1, momentum: 0.8, batch: 6 }', before: 4, fork: { lr: 0.07 }, after: 12, from: { fork: { nesterov: true }, at: 10, steps: 20 } }
];

/** Steps a cell through the controller (the app's path) and returns the notebook file and the branch to export. */
async function notebookOf(c: Case, dir: string): Promise<{ path: string; branch: string }> {
  let ledger: unknown;
  const host: CellHost = {
    readSource: () => spec(c.recipe),
    readLedger: () => (ledger === undefined ? undefined : JSON.parse(JSON.stringify(ledger))),
    writeLedger: (v) => (ledger = JSON.parse(JSON.stringify(v))),
    writeOutputs: () => undefined,
    cellId: () => c.name,
    findRecord: () => null,
    writeRecord: () => undefined
  };
  const ctl = new CellController({ host, engine: () => new EngineClient(inProcessPort(realCore)), ledger: ledgerGlue, checkSpec, settings: () => DEFAULT_SETTINGS });
  const must = (ok: boolean, what: string): void => {
    if (!ok) throw new Error(`${c.name}: ${what} failed: ${ctl.state.notice?.text ?? ''}`);
  };
  must(await ctl.run(), 'run');
  must(await ctl.step(c.before), 'step');
  must(await ctl.forkBranch({ atStep: c.before, set: c.fork, name: 'fix' }), 'fork');
  must(await ctl.step(c.after), 'step the fork');
  let branch = 'fix';
  if (c.from !== undefined) {
    must(await ctl.forkBranch({ atStep: c.from.at, set: c.from.fork, name: 'fix2', from: 'fix' }), 'second fork');
    must(await ctl.step(c.from.steps), 'step the second fork');
    branch = 'fix2';
  }
  ctl.dispose();
  const path = join(dir, `${c.name}.ipynb`);
  writeFileSync(path, JSON.stringify({ cells: [{ cell_type: 'code', id: c.name, source: spec(c.recipe), metadata: { stepwell: ledger }, outputs: [], execution_count: null }], metadata: {}, nbformat: 4, nbformat_minor: 5 }));
  return { path, branch };
}

describe('export round trip of branches forked after step 0 (PyPI torch 2.13.0)', () => {
  const dir = mkdtempSync(join(tmpdir(), 'stepwell-export-forks-'));
  const made: { c: Case; path: string; branch: string; script: string }[] = [];
  let results: Record<string, { losses: number[]; heldOut: number[] } | string> = {};
  const measured: string[] = [];

  beforeAll(async () => {
    if (!existsSync(PYTHON)) return;
    for (const c of CASES) {
      const nb = await notebookOf(c, dir);
      const script = join(dir, `${c.name}.py`);
      exportCommand(nb.path, { to: 'pytorch', out: script, branch: nb.branch });
      made.push({ c, ...nb, script });
    }
    const driver = [
      'import contextlib, io, json, runpy, sys',
      'out = {}',
      'for path, steps in zip(sys.argv[1::2], sys.argv[2::2]):',
      '    sys.argv = [path, "--steps", steps, "--json"]',
      '    buf = io.StringIO()',
      '    try:',
      '        with contextlib.redirect_stdout(buf):',
      '            runpy.run_path(path, run_name="__main__")',
      '        out[path] = json.loads(buf.getvalue())',
      '    except BaseException as e:',
      '        out[path] = f"{type(e).__name__}: {e}"',
      'print(json.dumps(out))'
    ].join('\n');
    const args = made.flatMap((m) => [m.script, String(m.c.from?.steps ?? m.c.after)]);
    const byPath = JSON.parse(execFileSync(PYTHON, ['-c', driver, ...args], { encoding: 'utf8', maxBuffer: 64 << 20 })) as Record<string, { losses: number[]; heldOut: number[] } | string>;
    results = Object.fromEntries(made.map((m) => [m.c.name, byPath[m.script]]));
  }, 300_000);

  /** The walk-in cooler demo: CSV data with a held-out file, standardized, safetensors start, the fix forked at step 1. */
  let cooler: { losses: number[]; heldOut: number[] } | string = 'not run';
  const COOLER = join(ROOT, 'demo-notebooks/walk-in-cooler/walk-in-cooler.ipynb');
  beforeAll(() => {
    if (!existsSync(PYTHON)) return;
    const script = join(dir, 'cooler.py');
    exportCommand(COOLER, { to: 'pytorch', out: script, branch: 'lr=0.1' });
    try {
      cooler = JSON.parse(execFileSync(PYTHON, [script, '--steps', '40', '--json'], { encoding: 'utf8' })) as { losses: number[]; heldOut: number[] };
    } catch (e) {
      cooler = String(e);
    }
  }, 120_000);

  afterAll(() => {
    if (measured.length > 0) process.stdout.write(`export round trip of forks, largest relative difference (loss, held-out) per case:\n${measured.join('\n')}\n`);
  });

  it('has the export venv and every case', () => {
    if (!existsSync(PYTHON)) throw new Error(`the export venv is missing (${PYTHON}); create it with: bash test/reference/export/make-venv.sh`);
    expect(made).toHaveLength(CASES.length);
  });

  // source: PyTorch 2.13.0+cpu from PyPI running the exported script (the script is the reference's input)
  it.each(CASES.map((c) => [c.name, c] as const))('%s', (_n, c) => {
    const m = made.find((x) => x.c === c);
    if (m === undefined) throw new Error('the export venv is missing; create it with: bash test/reference/export/make-venv.sh');
    const got = results[c.name];
    if (typeof got === 'string') throw new Error(`${c.name}: the exported script failed: ${got}`);
    const b = notebookBranch(m.path, undefined, m.branch);
    const at = b.forkSteps[0];
    expect(at).toBe(c.from?.at ?? c.before);
    const steps = c.from?.steps ?? c.after;
    const want = b.records.filter((r) => r.step >= at);
    expect(want).toHaveLength(steps + 1);
    expect(got.losses).toHaveLength(steps + 1);
    expect(got.heldOut).toHaveLength(steps + 1);
    const rel = (a: number, w: number): number => Math.abs(a - w) / Math.abs(w);
    if (c.reduced === true) {
      // the case must exercise a reduction made before the fork (else its counters prove nothing)
      const factor = b.stateAt(at).optimizer.scalars['plateau.factor'];
      expect(factor).toBeLessThan(1);
    }
    const tol = c.tol ?? TOL;
    const worst = Math.max(...want.map((r, k) => rel(got.losses[k], r.loss)));
    const worstHeld = Math.max(...want.map((r, k) => rel(got.heldOut[k], r.heldOutLoss as number)));
    measured.push(`  ${c.name.padEnd(40)} ${worst.toExponential(2)}  ${worstHeld.toExponential(2)}`);
    if (!(worst <= tol && worstHeld <= tol)) throw new Error(`${c.name}: differs from the ledger by ${worst.toExponential(3)} (loss), ${worstHeld.toExponential(3)} (held-out); torch ${JSON.stringify(got.losses.slice(0, 4))}…, ledger ${JSON.stringify(want.slice(0, 4).map((r) => r.loss))}…`);
    expect(want[steps].loss).toBeLessThan(want[0].loss);
  });

  // source: PyTorch 2.13.0+cpu from PyPI running the exported script
  it('the walk-in cooler demo\'s fix branch: data and held-out data from CSV files, weights from safetensors, started at its fork', () => {
    if (typeof cooler === 'string') throw new Error(`the exported script failed: ${cooler}`);
    const got = cooler;
    const b = notebookBranch(COOLER, undefined, 'lr=0.1');
    const want = b.records.filter((r) => r.step >= b.forkSteps[0]).slice(0, 41);
    expect(want).toHaveLength(41);
    expect(got.losses).toHaveLength(41);
    const worst = Math.max(...want.map((r, k) => Math.abs(got.losses[k] - r.loss) / r.loss), ...want.map((r, k) => Math.abs(got.heldOut[k] - (r.heldOutLoss as number)) / (r.heldOutLoss as number)));
    measured.push(`  ${'walk-in-cooler lr=0.1 (files, held-out)'.padEnd(40)} ${worst.toExponential(2)}`);
    expect(worst).toBeLessThanOrEqual(TOL);
  });

  it('refuses a fork of an optimizer no torch.optim class takes', async () => {
    const nb = await notebookOf({ name: 'refused-cg', recipe: '{ optimizer: cg, lr: 0.1 }', before: 3, fork: { lr: 0.05 }, after: 2 }, dir);
    expect(() => exportCommand(nb.path, { to: 'pytorch', out: join(dir, 'refused.py'), branch: nb.branch })).toThrow("has no torch.optim counterpart");
  });
});

/**
 * A spec file's `--branch S:KEY=VALUE` with S > 0: no ledger, so the export runs the trunk to S and
 * starts the script from the fork's state there; torch's losses must equal the branch of
 * `stepwell run SPEC --steps S+N --branch S:…` from step S on.
 */
describe('export round trip of a spec file\'s branch forked after step 0 (PyPI torch 2.13.0)', () => {
  const dir = mkdtempSync(join(tmpdir(), 'stepwell-export-spec-forks-'));
  const SPEC_CASES = [
    { name: 'spec-sgd-minibatch-warmup-cosine', recipe: CASES[0].recipe, branch: '9:lr=0.05', at: 9, steps: 20, tol: TOL },
    { name: 'spec-lbfgs-plateau', recipe: CASES.find((c) => c.name === 'lbfgs-plateau')?.recipe ?? '', branch: '6:lr=0.8', at: 6, steps: 20, tol: TOL_LBFGS },
  ];
  const got: Record<string, { losses: number[] } | string> = {};

  beforeAll(() => {
    if (!existsSync(PYTHON)) return;
    for (const c of SPEC_CASES) {
      const specPath = join(dir, `${c.name}.yaml`);
      writeFileSync(specPath, spec(c.recipe));
      const script = join(dir, `${c.name}.py`);
      exportCommand(specPath, { to: 'pytorch', out: script, branch: c.branch });
      try {
        got[c.name] = JSON.parse(execFileSync(PYTHON, [script, '--steps', String(c.steps), '--json'], { encoding: 'utf8' })) as { losses: number[] };
      } catch (e) {
        got[c.name] = String(e);
      }
    }
  }, 120_000);

  // source: PyTorch 2.13.0+cpu from PyPI running the exported script
  it.each(SPEC_CASES.map((c) => [c.name, c] as const))('%s', (_n, c) => {
    if (!existsSync(PYTHON)) throw new Error('the export venv is missing; create it with: bash test/reference/export/make-venv.sh');
    const torch = got[c.name];
    if (typeof torch === 'string' || torch === undefined) throw new Error(`${c.name}: the exported script failed: ${String(torch)}`);
    const run = JSON.parse(runCommand(join(dir, `${c.name}.yaml`), { steps: String(c.at + c.steps), branch: c.branch, json: true }).out) as { branch: { at: number; trajectory: { step: number; loss: number }[] } };
    expect(run.branch.at).toBe(c.at);
    const want = run.branch.trajectory;
    expect(want).toHaveLength(c.steps + 1);
    expect(want[0].step).toBe(c.at);
    expect(torch.losses).toHaveLength(c.steps + 1);
    const worst = Math.max(...want.map((r, k) => Math.abs(torch.losses[k] - r.loss) / Math.abs(r.loss)));
    process.stdout.write(`spec-file fork ${c.name}: largest relative difference ${worst.toExponential(2)}\n`);
    expect(worst).toBeLessThanOrEqual(c.tol);
  });
});

