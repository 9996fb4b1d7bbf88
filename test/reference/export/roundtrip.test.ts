/**
 * The export round trip: for each recipe below, `stepwell export --to pytorch` writes a script,
 * PyPI torch 2.13.0 (CPU, from the venv test/reference/export/make-venv.sh creates; `.ci/run`
 * runs it) executes it with `--steps N --json`, and its losses must equal what
 * `stepwell run SPEC --steps N --json` reports, to 1e-9 relative at every step (1e-6 for L-BFGS,
 * whose secant pairs and line-search decisions amplify round-off).
 *
 * Why 1e-9: both sides compute the same float64 formulas; they differ in summation order (torch's
 * addmm, its per-tensor norms in clip_grad_norm_, its erf), in the order of a few scalar operations
 * and in recursive versus closed-form schedules, all ~1e-16 relative per step, which 20–30 steps
 * of these small networks do not amplify past ~1e-13 (measured: see the printed maxima). A
 * difference of convention (dampening, clipping offset, schedule off by one, batch order, class
 * mapping) shows at 1e-4 or more.
 *
 * Networks and data are invented here (a fixed linear-congruential sequence); the reference is
 * PyTorch itself. The venv is required: without it the test fails and names the command.
 */
import { execFileSync } from 'child_process';
import { existsSync, mkdtempSync, readFileSync, writeFileSync, copyFileSync } from 'fs';
import { tmpdir } from 'os';
import { join } from 'path';
import { exportCommand } from '../../../src/cli/export';
import { runCommand } from '../../../src/cli/run';

const ROOT = join(__dirname, '../../..');
const PYTHON = join(ROOT, '.venv-torch/bin/python');
const STEPS = 24;
const FIX = join(ROOT, 'test/reference/data/fixtures');

/** Invented data: a fixed LCG, rounded to 4 decimals. */
function lcg(seed: number): () => number {
  let s = seed >>> 0;
  return () => {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    return Math.round(((s / 2 ** 32) * 4 - 2) * 1e4) / 1e4;
  };
}

function regression(rows: number, inputs: number, outputs: number, seed: number): { x: number[][]; y: number[][] } {
  const r = lcg(seed);
  const x = Array.from({ length: rows }, () => Array.from({ length: inputs }, r));
  const y = x.map((row) => Array.from({ length: outputs }, (_, j) => Math.round(Math.sin(row.reduce((a, v, i) => a + v * (i + j + 1) * 0.4, 0)) * 1e4) / 1e4));
  return { x, y };
}

function classes(rows: number, inputs: number, k: number, seed: number): { x: number[][]; y: number[] } {
  const { x } = regression(rows, inputs, 1, seed);
  return { x, y: x.map((row) => Math.abs(Math.floor(row[0] * 1.7 + row[1])) % k) };
}

const REG = regression(24, 3, 2, 11);
const CLS = classes(30, 4, 3, 12);
const net = (layers: string, data: { x: unknown; y: unknown }, loss = 'mse', extra = ''): string =>
  `seed: 5\nmodel: { inputs: ${(data.x as number[][])[0].length}, layers: ${layers} }\ndata: ${JSON.stringify(data)}\nloss: ${loss}\n${extra}`;
const TANH = net('[{ units: 6, activation: tanh }, { units: 2 }]', REG);
const GELU_CE = net('[{ units: 5, activation: gelu }, { units: 4, activation: softplus, beta: 2, threshold: 3 }, { units: 3 }]', CLS, 'cross-entropy');
const LEAKY = net('[{ units: 6, activation: leaky-relu, slope: 0.1 }, { units: 5, activation: elu, alpha: 0.7 }, { units: 2 }]', REG, 'mse', 'regularization: { l2: 0.01 }\n');
const BCE = net('[{ units: 5, activation: sigmoid }, { units: 1 }]', { x: CLS.x, y: CLS.y.map((c) => (c === 0 ? 0 : 1)) }, 'binary-cross-entropy');

type Case = [name: string, spec: string, recipe: string, tol?: number];
const LBFGS_TOL = 1e-6;
const CASES: Case[] = [
  ['sgd', TANH, '{ optimizer: sgd, lr: 0.1 }'],
  ['sgd-momentum-dampening', TANH, '{ optimizer: sgd, lr: 0.05, momentum: 0.9, dampening: 0.2 }'],
  ['sgd-nesterov-weight-decay', GELU_CE, '{ optimizer: sgd, lr: 0.1, momentum: 0.9, nesterov: true, weightDecay: 0.01 }'],
  ['adam', GELU_CE, '{ optimizer: adam, lr: 0.02 }'],
  ['adam-amsgrad-l2', LEAKY, '{ optimizer: adam, lr: 0.01, beta2: 0.95, amsgrad: true }'],
  ['adamw', TANH, '{ optimizer: adamw, lr: 0.02, weightDecay: 0.05 }'],
  ['rmsprop-centered-momentum', TANH, '{ optimizer: rmsprop, lr: 0.003, centered: true, momentum: 0.5 }'],
  ['adagrad', BCE, '{ optimizer: adagrad, lr: 0.1, lrDecay: 0.02, initialAccumulator: 0.1, eps: 1e-10 }'],
  ['lbfgs', TANH, '{ optimizer: lbfgs, lr: 1 }', LBFGS_TOL],
  ['lbfgs-max-iter-weight-decay', GELU_CE, '{ optimizer: lbfgs, lr: 1, maxIter: 4, history: 5, weightDecay: 0.01, decayBiases: false }', LBFGS_TOL],
  ['lbfgs-fixed-step', LEAKY, '{ optimizer: lbfgs, lr: 0.3, lineSearch: none }', LBFGS_TOL],
  ['schedule-step', TANH, '{ optimizer: sgd, lr: 0.2, schedule: { kind: step, every: 5, factor: 0.5 } }'],
  ['schedule-multistep', TANH, '{ optimizer: sgd, lr: 0.2, momentum: 0.5, schedule: { kind: multistep, milestones: [4, 10, 17], factor: 0.5 } }'],
  ['schedule-factor', GELU_CE, '{ optimizer: adam, lr: 0.03, schedule: { kind: factor, factor: 0.3, steps: 7 } }'],
  ['schedule-exponential', TANH, '{ optimizer: sgd, lr: 0.2, schedule: { kind: exponential, gamma: 0.93 } }'],
  ['schedule-inverse-time', TANH, '{ optimizer: rmsprop, lr: 0.01, schedule: { kind: inverse-time, decay: 0.2 } }'],
  ['schedule-polynomial', TANH, '{ optimizer: sgd, lr: 0.2, schedule: { kind: polynomial, steps: 18, power: 1.5 } }'],
  ['schedule-cosine-held', TANH, '{ optimizer: sgd, lr: 0.2, momentum: 0.8, schedule: { kind: cosine, steps: 15, floor: 0.1 } }'],
  ['schedule-restarts', GELU_CE, '{ optimizer: adam, lr: 0.03, schedule: { kind: restarts, period: 5, growth: 2, floor: 0.05 } }'],
  ['schedule-onecycle-past-end', TANH, '{ optimizer: sgd, lr: 0.3, schedule: { kind: onecycle, steps: 16 } }'],
  ['schedule-plateau-warmup', GELU_CE, '{ optimizer: adam, lr: 0.05, warmup: 3, schedule: { kind: plateau, factor: 0.5, patience: 1, threshold: 0.02, floor: 0.1 } }'],
  ['schedule-sequence', TANH, '{ optimizer: sgd, lr: 0.2, schedule: { kind: sequence, phases: [{ kind: factor, factor: 0.2, steps: 3 }, { kind: cosine, steps: 8 }, { kind: inverse-time, decay: 0.3 }], milestones: [4, 12] } }'],
  ['warmup-step', GELU_CE, '{ optimizer: sgd, lr: 0.5, warmup: 4, schedule: { kind: step, every: 6, factor: 0.3 } }'],
  ['warmup-cosine-floor-layer-scales', TANH, '{ optimizer: sgd, lr: 0.1, momentum: 0.9, warmup: 5, schedule: { kind: cosine, steps: 20, floor: 0.2 }, layers: [{ lrScale: 2 }, { lrScale: 0.5 }] }'],
  ['clip-norm', TANH, '{ optimizer: sgd, lr: 0.3, clipNorm: 0.2 }'],
  ['clip-value-then-norm', GELU_CE, '{ optimizer: adam, lr: 0.02, clipValue: 0.05, clipNorm: 0.3 }'],
  ['layer-rates-no-bias-decay', LEAKY, '{ optimizer: adamw, lr: 0.02, weightDecay: 0.1, decayBiases: false, layers: [{ lrScale: 1.5 }, { lrScale: 1 }, { lrScale: 0.25 }] }'],
  ['minibatch-sgd', TANH, '{ optimizer: sgd, lr: 0.1, momentum: 0.9, batch: 5 }'],
  ['standardized-inline', net('[{ units: 6, activation: tanh }, { units: 2 }]', { ...REG, standardize: true } as never), '{ optimizer: sgd, lr: 0.2, momentum: 0.5 }'],
  ['own-activation-written-derivative', net('[{ units: 6, activation: { expr: "x / (1 + abs(x))", derivative: "1 / (1 + abs(x))^2" } }, { units: 2 }]', REG), '{ optimizer: sgd, lr: 0.1, momentum: 0.9 }'],
  ['own-activation-wrong-derivative-followed', net('[{ units: 6, activation: { expr: "tanh(x)", derivative: "1.02 * (1 - tanh(x)^2)" } }, { units: 2 }]', REG), '{ optimizer: sgd, lr: 0.2 }'],
  ['own-loss-derived', net('[{ units: 5, activation: { expr: "x / (1 + exp(-x))" } }, { units: 2 }]', REG, '{ expr: "log(cosh(y - t))" }'), '{ optimizer: adam, lr: 0.02, batch: 6 }'],
  ['minibatch-adam-onecycle-layers', GELU_CE, '{ optimizer: adam, lr: 0.02, batch: 8, schedule: { kind: onecycle, steps: 24, peak: 0.25, anneal: linear, threePhase: true }, layers: [{ lrScale: 1 }, { lrScale: 0.5 }, { lrScale: 2 }] }'],
];

/** Specs whose data and weights come from files (the fixtures NumPy / torch wrote). */
const FILE_CASES: [string, string, string[]][] = [
  [
    'csv-labels-safetensors-weights',
    'seed: 2\nmodel: { inputs: 2, layers: [{ units: 4, activation: tanh }, { units: 3 }] }\ndata: { file: header.csv, features: [temp, humidity], target: label }\nloss: cross-entropy\nrecipe: { optimizer: adam, lr: 0.05, batch: 3 }\n',
    ['header.csv'],
  ],
  [
    'npz-data-state-dict-weights',
    'seed: 2\nmodel: { inputs: 3, layers: [{ units: 6, activation: tanh }, { units: 1 }], weights: { file: regressor-f64.safetensors } }\ndata: { file: m-f8-be-F.npy, features: [0, 1, 2], target: [3] }\nloss: mse\nrecipe: { optimizer: sgd, lr: 0.01, momentum: 0.9 }\nregularization: { l2: 0.001 }\n',
    ['m-f8-be-F.npy', 'regressor-f64.safetensors'],
  ],
  [
    'csv-standardized',
    'seed: 2\nmodel: { inputs: 2, layers: [{ units: 4, activation: tanh }, { units: 3 }] }\ndata: { file: header.csv, features: [temp, humidity], target: label, standardize: true }\nloss: cross-entropy\nrecipe: { optimizer: sgd, lr: 0.5 }\n',
    ['header.csv'],
  ],
];

function losses(runJson: string): number[] {
  return (JSON.parse(runJson) as { trajectory: { loss: number }[] }).trajectory.map((r) => r.loss);
}

describe('export round trip with PyPI torch 2.13.0 (CPU)', () => {
  it('has the export venv', () => {
    if (!existsSync(PYTHON)) {
      throw new Error(`the export venv is missing (${PYTHON}); create it with: bash test/reference/export/make-venv.sh`);
    }
  });
  const dir = mkdtempSync(join(tmpdir(), 'stepwell-export-'));
  const all: { name: string; spec: string; tol: number }[] = [];
  for (const [name, spec, recipe, tol] of CASES) {
    const path = join(dir, `${name}.yaml`);
    writeFileSync(path, `${spec}recipe: ${recipe}\n`);
    all.push({ name, spec: path, tol: tol ?? 1e-9 });
  }
  for (const [name, spec, files] of FILE_CASES) {
    const path = join(dir, `${name}.yaml`);
    writeFileSync(path, spec);
    for (const f of files) copyFileSync(join(FIX, f), join(dir, f));
    all.push({ name, spec: path, tol: 1e-9 });
  }
  let results: Record<string, number[] | string> = {};
  const measured: string[] = [];
  afterAll(() => {
    if (measured.length > 0) process.stdout.write(`export round trip, largest relative loss difference per recipe:\n${measured.join('\n')}\n`);
  });
  beforeAll(() => {
    if (!existsSync(PYTHON)) return;
    const scripts = all.map((c) => {
      const out = join(dir, `${c.name}.py`);
      exportCommand(c.spec, { to: 'pytorch', out });
      return out;
    });
    // one interpreter for every script: torch is imported once
    const driver = [
      'import contextlib, io, json, runpy, sys',
      'out = {}',
      'for path in sys.argv[1:]:',
      '    sys.argv = [path, "--steps", "' + STEPS + '", "--json"]',
      '    buf = io.StringIO()',
      '    try:',
      '        with contextlib.redirect_stdout(buf):',
      '            runpy.run_path(path, run_name="__main__")',
      '        out[path] = json.loads(buf.getvalue())["losses"]',
      '    except BaseException as e:',
      '        out[path] = f"{type(e).__name__}: {e}"',
      'print(json.dumps(out))',
    ].join('\n');
    const text = execFileSync(PYTHON, ['-c', driver, ...scripts], { encoding: 'utf8', maxBuffer: 64 << 20, env: { ...process.env, PYTHONWARNINGS: 'ignore' } });
    const byPath = JSON.parse(text) as Record<string, number[] | string>;
    results = Object.fromEntries(all.map((c, i) => [c.name, byPath[scripts[i]]]));
  }, 300_000);

  it('runs every optimizer family, schedule and option the brief lists', () => {
    expect(all.length).toBe(36);
    const text = all.map((c) => readFileSync(c.spec, 'utf8')).join('\n');
    for (const needle of ['optimizer: sgd', 'nesterov: true', 'optimizer: adam,', 'optimizer: adamw', 'centered: true', 'optimizer: adagrad', 'optimizer: lbfgs', 'clipNorm', 'clipValue', 'lrScale', 'batch: 5', 'kind: step', 'kind: multistep', 'kind: factor', 'kind: exponential', 'kind: inverse-time', 'kind: polynomial', 'kind: cosine', 'kind: restarts', 'kind: onecycle', 'kind: plateau', 'kind: sequence', 'warmup:', 'derivative: "1 / (1 + abs(x))^2"', 'loss: { expr:']) {
      expect(text).toContain(needle);
    }
  });

  // source: PyTorch 2.13.0+cpu from PyPI running the exported script (the script is the reference's input)
  it.each(all.map((c) => [c.name, c] as const))('%s', (_n, c) => {
    if (!existsSync(PYTHON)) throw new Error('the export venv is missing; create it with: bash test/reference/export/make-venv.sh');
    const got = results[c.name];
    if (typeof got === 'string') throw new Error(`${c.name}: the exported script failed: ${got}`);
    const want = losses(runCommand(c.spec, { steps: String(STEPS), json: true }).out);
    expect(want.length).toBe(STEPS + 1);
    expect(got.length).toBe(STEPS + 1);
    const worst = Math.max(...want.map((w, k) => Math.abs(got[k] - w) / Math.abs(w)));
    measured.push(`  ${c.name.padEnd(36)} ${worst.toExponential(2)}`);
    if (!(worst <= c.tol)) throw new Error(`${c.name}: losses differ from stepwell run by ${worst.toExponential(3)} relative (> ${c.tol}); torch ${JSON.stringify(got.slice(0, 6))}…, stepwell ${JSON.stringify(want.slice(0, 6))}…`);
    // the run must move, so agreement is not that of two stalled runs
    expect(want[STEPS]).toBeLessThan(want[0]);
  });
});
