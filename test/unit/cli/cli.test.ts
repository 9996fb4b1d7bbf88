import { execFileSync } from 'node:child_process';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { main } from '../../../src/cli/main';

const dir = mkdtempSync(join(tmpdir(), 'stepwell-cli-'));
function file(name: string, text: string): string {
  const p = join(dir, name);
  writeFileSync(p, text);
  return p;
}
async function cli(...argv: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = '', err = '';
  const code = await main(argv, { write: (s: string) => (out += s) }, { write: (s: string) => (err += s) });
  return { code, out, err };
}

// An invented two-input regression (demo data; not an expected value).
const spec = file('net.yaml', `seed: 7
model:
  inputs: 2
  layers:
    - { units: 3, activation: tanh }
    - { units: 1, activation: linear }
data:
  x: [[0.2, -0.1], [0.7, 0.4], [-0.5, 0.3], [0.1, 0.9], [-0.8, -0.6]]
  y: [[0.1], [0.9], [-0.2], [0.5], [-0.7]]
recipe: { optimizer: sgd, lr: 0.05 }
`);
const rosen = file('rosen.yaml', 'seed: 1\nmodel: { objective: rosenbrock }\nrecipe: { optimizer: sgd, lr: 0.001 }\n');

describe('stepwell inspect', () => {
  it('prints loss, gradient, H·v, eigenvalues and the audit as one JSON object', async () => {
    const v = file('v.json', JSON.stringify([1, 0]));
    const r = await cli('inspect', rosen, '--json', '--vector', v, '--top', '2', '--bottom', '1');
    expect(r.code).toBe(0);
    const o = JSON.parse(r.out);
    // source: Nocedal & Wright 2006 §2: f(−1.2, 1) = 24.2, ∇f = (−215.6, −88), ∂²f/∂x² = 1200x² − 400y + 2 = 1330, ∂²f/∂x∂y = −400x = 480
    expect(o.parameterCount).toBe(2);
    expect(o.loss).toBeCloseTo(24.2, 12);
    expect(o.gradient[0]).toBeCloseTo(-215.6, 10);
    expect(o.gradient[1]).toBeCloseTo(-88, 10);
    expect(o.hvp).toEqual([1330, 480]);
    // source: closed form of a 2×2 symmetric matrix [[1330, 480], [480, 200]]: mid ± √(((a−d)/2)² + b²)
    const mid = (1330 + 200) / 2, rad = Math.hypot((1330 - 200) / 2, 480);
    expect(o.eigenvalues[0]).toBeCloseTo(mid + rad, 9);
    expect(o.eigenvalues[1]).toBeCloseTo(mid - rad, 9);
    expect(o.bottomEigenvalues).toEqual([o.eigenvalues[1]]);
    expect(o.gradcheck.verdict).toBe('right');
  });

  it('reports a vector of the wrong length with the expected count', async () => {
    const v = file('short.json', '[1, 2, 3]');
    const r = await cli('inspect', spec, '--vector', v);
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/must hold a JSON array of 13 numbers \(one per parameter\), got 3 entries/);
  });
});

describe('stepwell run', () => {
  it('prints N+1 records, record k after k updates, and the final state', async () => {
    const r = await cli('run', spec, '--steps', '4', '--json');
    expect(r.code).toBe(0);
    const o = JSON.parse(r.out);
    expect(o.trajectory.map((t: { step: number }) => t.step)).toEqual([0, 1, 2, 3, 4]);
    expect(o.final.parameters).toHaveLength(13);
    expect(o.final.loss).toBe(o.trajectory[4].loss);
    expect(o.final.fingerprint).toMatch(/^[0-9a-f]{64}$/);
    // common practice: small-step full-batch gradient descent decreases the loss monotonically.
    expect(o.trajectory.every((t: { loss: number }, i: number, a: { loss: number }[]) => i === 0 || t.loss < a[i - 1].loss)).toBe(true);
  });

  it('is deterministic: the same spec and seed give the same fingerprint', async () => {
    const a = JSON.parse((await cli('run', spec, '--steps', '3', '--json')).out);
    const b = JSON.parse((await cli('run', spec, '--steps', '3', '--json')).out);
    expect(a.final.fingerprint).toBe(b.final.fingerprint);
  });

  it('applies --set recipe overrides and stops on divergence with --until', async () => {
    const q = file('quad.yaml', 'seed: 0\nmodel: { objective: quadratic, matrix: [[4]], center: [0], start: [1] }\nrecipe: { optimizer: sgd, lr: 0.1 }\n');
    // source: CHECKS.md / Nocedal & Wright ch. 3: η > 2/c = 0.5 diverges on c/2·w² with c = 4
    const r = JSON.parse((await cli('run', q, '--steps', '500', '--until', 'diverged', '--set', 'lr=0.6', '--json')).out);
    expect(r.stopped).toBe('diverged');
    expect(r.trajectory.length).toBeLessThan(501);
    expect(r.trajectory[1].lr).toBe(0.6);
  });

  it('names the field and its line for a bad spec and exits non-zero', async () => {
    const bad = file('bad.yaml', 'seed: 1\nmodel: { objective: rosenbrock }\nrecipe: { optimizer: sgd, lrr: 0.1 }\n');
    const r = await cli('run', bad, '--steps', '1');
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/bad\.yaml:3:\d+: unknown key 'lrr' in recipe \(did you mean 'lr'\?\)/);
  });

  it('says which flag is missing', async () => {
    const r = await cli('run', spec);
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/run needs --steps N/);
  });
});

describe('flags and messages', () => {
  it.each(['', '0x10', '1e3', '-1', '2.5', ' 7'])('refuses --steps %j with a message naming the flag', async (steps) => {
    const r = await cli('run', spec, `--steps=${steps}`, '--json');
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/--steps must be a non-negative integer in decimal digits/);
  });

  it('refuses an absurd --steps before doing any work', async () => {
    const r = await cli('run', spec, '--steps', '1000000000000', '--json');
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/--steps must be at most 1000000, got 1000000000000/);
  });

  it('ends every error line with content: no dangling "stepwell: " line after the usage', async () => {
    const r = await cli('frobnicate');
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/unknown command 'frobnicate'/);
    expect(r.err.split('\n').filter((l) => /^stepwell:\s*$/.test(l))).toEqual([]);
  });

  it('says when --until stopped at the step cap without meeting its condition', async () => {
    const r = await cli('run', spec, '--steps', '3', '--until', 'loss<1e-12');
    expect(r.code).toBe(0);
    expect(r.out).toMatch(/the condition --until loss<1e-12 was not met within 3 steps/);
  });

  it('sets model and data keys with --set and names a bad key', async () => {
    const ok = JSON.parse((await cli('run', spec, '--steps', '2', '--json', '--set', 'model.init=he-normal', '--set', 'layers[0].lrScale=0.5')).out);
    const base = JSON.parse((await cli('run', spec, '--steps', '2', '--json')).out);
    expect(ok.trajectory[0].loss).not.toBe(base.trajectory[0].loss); // another init scheme, other starting weights
    const bad = await cli('run', spec, '--steps', '2', '--set', '__proto__=1');
    expect(bad.code).toBe(2);
    expect(bad.err).toMatch(/--set: "__proto__" names '__proto__', which is not a spec key/);
    const nan = await cli('run', spec, '--steps', '2', '--set', 'lr=.nan');
    expect(nan.err).toMatch(/patch 'lr': recipe\.lr/);
    expect(nan.err).not.toMatch(/:\d+:\d+:/); // no position inside an internal copy of the text
  });

  it('refuses a setup change forked after step 0', async () => {
    const r = await cli('run', spec, '--steps', '4', '--branch', '2:model.init=he-normal');
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/changes the setup or the seed, so it must fork at step 0/);
  });
});

describe('non-finite numbers and long runs', () => {
  // source: gradient descent on c/2·w² multiplies w by (1 − ηc) per step (CHECKS.md); with c = 4 and
  // η = 1e200 the weight overflows to ±Infinity within two steps, so the loss is no longer finite.
  const blowUp = file('blow.yaml', 'seed: 0\nmodel: { objective: quadratic, matrix: [[4]], center: [0], start: [1] }\nrecipe: { optimizer: sgd, lr: 1e200 }\n');

  it('stops at the first non-finite loss without --until, reports it, and keeps the last finite state as final (exit 3)', async () => {
    const r = await cli('run', blowUp, '--steps', '50', '--json');
    expect(r.code).toBe(3);
    const o = JSON.parse(r.out);
    expect(o.stopped).toBe('diverged');
    const bad = o.trajectory[o.trajectory.length - 1];
    expect(o.divergedAt).toBe(bad.step);
    expect(typeof bad.loss === 'string' && ['NaN', 'Infinity'].includes(bad.loss)).toBe(true); // not null
    expect(o.final.step).toBe(bad.step - 1);
    expect(Number.isFinite(o.final.loss)).toBe(true);
    expect(o.final.parameters.every((x: unknown) => typeof x === 'number')).toBe(true);
    const text = await cli('run', blowUp, '--steps', '50');
    expect(text.out).toMatch(/became non-finite at step \d+; the final state is the last finite one/);
  });

  it('treats divergence asked for with --until diverged as success (exit 0)', async () => {
    const r = await cli('run', blowUp, '--steps', '50', '--until', 'diverged', '--json');
    expect(r.code).toBe(0);
  });

  it('refuses a spec whose loss is not finite before any update', async () => {
    const huge = file('huge-gain.yaml', `seed: 7
model:
  inputs: 2
  gain: 1e308
  layers:
    - { units: 3, activation: linear }
    - { units: 1, activation: linear }
data:
  x: [[0.2, -0.1], [0.7, 0.4]]
  y: [[0.1], [0.9]]
`);
    const r = await cli('run', huge, '--steps', '3', '--json');
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/the loss is already (NaN|Infinity) at step 0/);
  });

  it('inspect refuses a non-finite starting point with a message instead of a crash', async () => {
    const huge = file('huge-gain-inspect.yaml', 'seed: 1\nmodel: { inputs: 2, gain: 1e200, layers: [{ units: 4, activation: tanh }, { units: 1 }] }\ndata: { x: [[1, 2], [0.5, -1]], y: [[1], [0]] }\n');
    const r = await cli('inspect', huge, '--top', '2');
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/the loss is already (Infinity|NaN) at the initial weights/);
  });

  it('says when a line search stalls instead of going on silently', async () => {
    const net = file('stall.yaml', 'seed: 1\nmodel: { inputs: 2, layers: [{ units: 4, activation: tanh }, { units: 1 }] }\ndata: { x: [[1, 2], [0.5, -1], [2, 0.1]], y: [[1], [0], [0.5]] }\nrecipe: { optimizer: lbfgs, lr: 1e300 }\n');
    const r = await cli('run', net, '--steps', '4');
    expect(r.out).toMatch(/no progress from step 1 to 4: every update was zero although the gradient was not — the line search found no lower loss/);
    const j = JSON.parse((await cli('run', net, '--steps', '4', '--json')).out);
    expect(j.stalled).toEqual({ from: 1, to: 4, updates: 4 });
  });

  it('prints the spec warnings on standard error', async () => {
    const w = file('warn.yaml', 'seed: 1\nmodel: { objective: rosenbrock }\nrecipe: { optimizer: sgd, lr: 0.001, batch: 4 }\n');
    const r = await cli('run', w, '--steps', '1', '--json');
    expect(r.code).toBe(0);
    expect(r.err).toMatch(/^stepwell: warning: .*warn\.yaml:3:\d+: recipe\.batch picks data rows/m);
  });

  it('runs 150 000 steps without overflowing the stack when joining records', async () => {
    const q = file('long.yaml', 'seed: 0\nmodel: { objective: quadratic, matrix: [[1]], center: [0], start: [1] }\nrecipe: { optimizer: sgd, lr: 0.001 }\n');
    const r = await cli('run', q, '--steps', '150000', '--json');
    expect(r.code).toBe(0);
    expect(JSON.parse(r.out).trajectory).toHaveLength(150_001);
  });
});

describe('size limits', () => {
  const wide = file('wide.yaml', 'model: { inputs: 2, layers: [{ units: 3000000 }, { units: 1 }] }\ndata: { x: [[1, 2]], y: [[1]] }\n');

  it('refuses an absurd layer before allocating it, naming the limit and how to raise it', async () => {
    const r = await cli('run', wide, '--steps', '1', '--json');
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/wide\.yaml:1:\d+: the network would have 12 000 001 parameters \(model\.layers\[0\]\.units is 3 000 000\), above the limit of 2 000 000 \(limit maxParameters\)/);
  });

  it('takes --limit NAME=VALUE and refuses unknown limits', async () => {
    const tight = await cli('run', spec, '--steps', '1', '--json', '--limit', 'maxParameters=5');
    expect(tight.err).toMatch(/above the limit of 5 \(limit maxParameters\)/);
    const bad = await cli('run', spec, '--steps', '1', '--limit', 'speed=9');
    expect(bad.code).toBe(2);
    expect(bad.err).toMatch(/--limit: expected NAME=VALUE with NAME one of maxSpecChars, maxParameters/);
  });
});

describe('the installed bin', () => {
  it('runs through npx without a build step', () => {
    const out = execFileSync('npx', ['stepwell', 'run', rosen, '--steps', '2', '--json'], { encoding: 'utf8' });
    expect(JSON.parse(out).trajectory).toHaveLength(3);
  });
});

describe('stepwell run --branch and --replay', () => {
  it('forks a branch with a changed recipe from the recorded state and replays bit-identically', async () => {
    const q = file('quad-branch.yaml', 'seed: 0\nmodel: { objective: quadratic, matrix: [[4]], center: [0], start: [1] }\nrecipe: { optimizer: sgd, lr: 0.45 }\n');
    const r = JSON.parse((await cli('run', q, '--steps', '10', '--branch', '3:lr=0.25', '--replay', '--json')).out);
    // The branch shares records 0…3 with the main trajectory.
    expect(r.branch.at).toBe(3);
    expect(r.branch.trajectory[0]).toEqual(r.trajectory[3]);
    expect(r.branch.trajectory.map((t: { step: number }) => t.step)).toEqual([3, 4, 5, 6, 7, 8, 9, 10]);
    // source: CHECKS.md / Nocedal & Wright ch. 3: on c/2·w² (c = 4) η = 1/c = 0.25 reaches the minimum in one step.
    expect(r.branch.trajectory[1].loss).toBe(0);
    // η = 0.45 < 2/c keeps oscillating towards 0: w_k = (1 − 0.45·4)^k = (−0.8)^k.
    expect(r.final.parameters[0]).toBeCloseTo((-0.8) ** 10, 14);
    expect(r.replay.match).toBe('bit-identical');
  });

  it('validates the branch overrides like the spec itself', async () => {
    const r = await cli('run', spec, '--steps', '4', '--branch', '2:lr=-1');
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/recipe\.lr/);
    const s = await cli('run', spec, '--steps', '4', '--branch', 'two:lr=0.1');
    expect(s.err).toMatch(/--branch must be STEP:KEY=VALUE/);
  });
});

describe('stepwell inspect: curvature flags', () => {
  it('reports the exact spectrum, trace and stable learning rate of a quadratic', async () => {
    // A diagonal quadratic with chosen eigenvalues 9, 4, 1, −0.5 (invented spectrum).
    const q = file('quad4.yaml', 'seed: 0\nmodel: { objective: quadratic, matrix: [[9,0,0,0],[0,4,0,0],[0,0,1,0],[0,0,0,-0.5]], start: [1,1,1,1] }\nrecipe: { optimizer: sgd, lr: 0.1 }\n');
    const o = JSON.parse((await cli('inspect', q, '--json', '--top', '2', '--bottom', '1', '--trace')).out);
    // source: eigenvalues of a diagonal matrix are its entries; trace is their sum (common practice)
    expect(o.eigenMethod).toBe('dense');
    expect(o.eigenvalues[0]).toBeCloseTo(9, 12);
    expect(o.eigenvalues[1]).toBeCloseTo(4, 12);
    expect(o.bottomEigenvalues[0]).toBeCloseTo(-0.5, 12);
    expect(o.trace.value).toBeCloseTo(13.5, 12);
    // source: CHECKS.md / Nocedal & Wright ch. 3: gradient descent is stable iff η < 2/λmax = 2/9; margin η·λmax/2 = 0.45
    expect(o.stability.largestStableLr).toBeCloseTo(2 / 9, 12);
    expect(o.stability.margin).toBeCloseTo(0.45, 12);
  });

  it('switches to Lanczos with error bounds above the dense limit, and gives a density that integrates to 1', async () => {
    // 20 inputs → 100 tanh → 1: P = 2 201 > 2 000 (invented rows).
    const rows = Array.from({ length: 6 }, (_, i) => Array.from({ length: 20 }, (_, j) => Math.sin(i * 3 + j)));
    const big = file('big.json', JSON.stringify({ seed: 2, model: { inputs: 20, layers: [{ units: 100, activation: 'tanh' }, { units: 1, activation: 'linear' }] }, data: { x: rows, y: rows.map((r) => [r[0]]) }, recipe: { optimizer: 'sgd', lr: 0.1 } }));
    const o = JSON.parse((await cli('inspect', big, '--json', '--top', '2', '--density')).out);
    expect(o.parameterCount).toBe(2201);
    expect(o.eigenMethod).toBe('lanczos');
    // source: Golub & Van Loan 4th ed. ch. 10: the Ritz residual |β_m s_mi| bounds the eigenvalue error
    expect(o.eigenvalueErrorBounds[0]).toBeLessThan(1e-6 * Math.abs(o.eigenvalues[0]));
    const step = o.density.grid[1] - o.density.grid[0];
    const mass = o.density.density.reduce((s: number, x: number) => s + x * step, 0);
    // source: Ubaru, Chen & Saad 2017: SLQ quadrature weights sum to 1 per probe, so the broadened density integrates to ~1
    expect(mass).toBeCloseTo(1, 2);
  });
});
