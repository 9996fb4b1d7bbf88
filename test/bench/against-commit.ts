/**
 * Before and after a speed change, in one process, interleaved: the network and its kernels as
 * they are in the working tree against the same files at an earlier commit (`git archive` of its
 * `src/` into `test-output/`, gitignored, so its imports resolve against this node_modules).
 * Both sides get the same weights, rows and direction; each round runs both, in alternating
 * order, and the median process CPU time per call is compared, so load from other work on a
 * shared machine slows both sides alike. Every row also says whether both sides produced the
 * same bits (a speed change must not move one).
 *
 *   npx tsx test/bench/against-commit.ts <commit>           e.g. main, HEAD~3 or a hash
 *   npx tsx test/bench/against-commit.ts <commit> lanczos   the Lanczos basis instead: one
 *     re-orthogonalization at 30, 60 and 90 vectors of 85 002, then top-10 Lanczos on MLP b and c
 *     (both sides over the working tree's Hessian-vector product; STEPWELL_AB_ROUNDS rounds, 4
 *     by default), with the CPU time spent inside the re-orthogonalization during those runs
 *
 * Prints; writes nothing but the extracted tree.
 */
import { execFileSync } from 'node:child_process';
import { existsSync, mkdirSync } from 'node:fs';
import { loadavg } from 'node:os';
import { join } from 'node:path';
import { Network } from '../../src/core/model/network';
import { matrixKernels } from '../../src/core/model/kernels';
import { Rng } from '../../src/core/rng';
import { MLPS } from './compare';
import { buildMlp, mlpSetup } from './networks';
import { KrylovBasis } from '../../src/core/linalg/krylov-basis';
import { lanczosExtremes } from '../../src/core/linalg/lanczos';
import { curvatureOperator } from '../../src/core/probe/curvature';

type NetworkClass = typeof Network;
type KernelsFn = typeof matrixKernels;

const root = join(__dirname, '..', '..');

/** The commit's `src/` extracted once into test-output/against-<hash>/src. */
function extract(commit: string): string {
  const hash = execFileSync('git', ['rev-parse', '--short=12', commit], { cwd: root, encoding: 'utf8' }).trim();
  const dir = join(root, 'test-output', `against-${hash}`);
  if (!existsSync(join(dir, 'src'))) {
    mkdirSync(dir, { recursive: true });
    const tar = execFileSync('git', ['archive', hash, 'src'], { cwd: root, maxBuffer: 1 << 30 });
    execFileSync('tar', ['-x', '-C', dir], { input: tar });
  }
  return dir;
}

const median = (xs: number[]): number => [...xs].sort((a, b) => a - b)[xs.length >> 1];

/**
 * Median CPU ms per call of each side over `rounds` rounds of `reps` calls, sides alternating
 * first; each round starts with one untimed call per side unless `warm` is false.
 */
function interleaved(sides: [() => void, () => void], rounds: number, reps: number, warm = true): [number, number] {
  const cpu: [number[], number[]] = [[], []];
  for (let r = 0; r < rounds; r++) {
    for (const s of r % 2 === 0 ? [0, 1] : [1, 0]) {
      if (warm) sides[s]();
      const c = process.cpuUsage();
      for (let i = 0; i < reps; i++) sides[s]();
      const u = process.cpuUsage(c);
      cpu[s].push((u.user + u.system) / 1000 / reps);
    }
  }
  return [median(cpu[0]), median(cpu[1])];
}

const sameBits = (a: Float64Array, b: Float64Array): boolean => a.length === b.length && a.every((x, i) => Object.is(x, b[i]));

function line(what: string, [before, after]: [number, number], same: boolean): void {
  process.stdout.write(`${what.padEnd(44)} before ${before.toFixed(3).padStart(8)} ms  after ${after.toFixed(3).padStart(8)} ms  after/before ${(after / before).toFixed(3)}  same bits ${same}\n`);
}

type BasisClass = typeof KrylovBasis;
type LanczosFn = typeof lanczosExtremes;
type RngClass = typeof Rng;

/** The Lanczos basis and top-10 Lanczos of the working tree against the commit's (mode `lanczos`). */
async function lanczosRows(dir: string): Promise<void> {
  const old = (await import(join(dir, 'src/core/linalg/krylov-basis.ts'))) as { KrylovBasis: BasisClass };
  const oldLanczos = (await import(join(dir, 'src/core/linalg/lanczos.ts'))) as { lanczosExtremes: LanczosFn };
  const oldRng = (await import(join(dir, 'src/core/rng.ts'))) as { Rng: RngClass };
  const n = 85_002;
  const rng = Rng.fromSeed(4);
  const stores = [new old.KrylovBasis(n, 91), new KrylovBasis(n, 91)];
  const w0 = rng.fillNormal(new Float64Array(n));
  const ws = [new Float64Array(n), new Float64Array(n)];
  const corrections = [0, 0];
  for (let m = 1; m <= 90; m++) {
    const q = rng.fillNormal(new Float64Array(n));
    let s = 0;
    for (const x of q) s += x * x;
    for (let i = 0; i < n; i++) q[i] /= Math.sqrt(s);
    for (const st of stores) st.push(q);
    if (m % 30 !== 0) continue;
    const side = (k: number) => (): void => {
      ws[k].set(w0);
      corrections[k] = stores[k].orthogonalize(ws[k], m - 1);
    };
    const t = interleaved([side(0), side(1)], 9, 5);
    line(`orthogonalize, ${m} vectors of ${n}`, t, sameBits(ws[0], ws[1]) && Object.is(corrections[0], corrections[1]));
  }
  stores.length = 0;
  // CPU time inside the re-orthogonalization, per side, during the timed runs: the basis is
  // evicted from the caches by the products between calls, which a loop over one call is not
  const inside = [0, 0];
  [old.KrylovBasis, KrylovBasis].forEach((cls, k) => {
    const orthogonalize = cls.prototype.orthogonalize;
    cls.prototype.orthogonalize = function (this: KrylovBasis, w: Float64Array, index: number): number {
      const c = process.cpuUsage();
      const r = orthogonalize.call(this, w, index);
      const u = process.cpuUsage(c);
      inside[k] += (u.user + u.system) / 1000;
      return r;
    };
  });
  for (const c of MLPS.filter((x) => x.name !== 'MLP a')) {
    const { net, w } = buildMlp(c, 1);
    const P = net.parameterCount;
    const values: Float64Array[] = [new Float64Array(10), new Float64Array(10)];
    const run = (k: number) => (): void => {
      net.forgetPass();
      const op = curvatureOperator(net, w);
      const r = k === 0
        ? oldLanczos.lanczosExtremes(op.apply, P, oldRng.Rng.fromSeed(1), { k: 10, tol: 1e-10 })
        : lanczosExtremes(op.apply, P, Rng.fromSeed(1), { k: 10, tol: 1e-10 });
      values[k] = Float64Array.from(r.largest, (p) => p.value);
    };
    // a run of MLP c takes seconds, of MLP b a tenth of one
    const rounds = Number(process.env.STEPWELL_AB_ROUNDS ?? 4) * (P > 20_000 ? 1 : 5);
    inside.fill(0);
    line(`top-10 Lanczos ${c.name} (P ${P})`, interleaved([run(0), run(1)], rounds, 1, false), sameBits(values[0], values[1]));
    line('  of which re-orthogonalization, per run', [inside[0] / rounds, inside[1] / rounds], sameBits(values[0], values[1]));
  }
}

async function main(): Promise<void> {
  const commit = process.argv[2];
  if (!commit) throw new Error('usage: npx tsx test/bench/against-commit.ts <commit> [lanczos]');
  const dir = extract(commit);
  if (process.argv[3] === 'lanczos') {
    process.stdout.write(`working tree against ${commit} (CPU time, interleaved); load ${loadavg()[0].toFixed(2)}\n`);
    await lanczosRows(dir);
    return;
  }
  const old = (await import(join(dir, 'src/core/model/network.ts'))) as { Network: NetworkClass };
  const oldKernels = (await import(join(dir, 'src/core/model/kernels.ts'))) as { matrixKernels: KernelsFn };
  process.stdout.write(`working tree against ${commit} (CPU time, interleaved); load ${loadavg()[0].toFixed(2)}\n`);
  for (const c of MLPS.filter((m) => m.name !== 'MLP a')) {
    const { model, data, w } = mlpSetup(c, 1);
    const nets = [new old.Network(model, data, c.loss, 0), new Network(model, data, c.loss, 0)];
    const P = nets[1].parameterCount;
    const v = Rng.fromSeed(2).fillNormal(new Float64Array(P));
    const outs = [new Float64Array(P), new Float64Array(P)];
    const reps = Math.max(1, Math.round(2e7 / (6 * P * c.batch)));
    const subject = `${c.name} ${c.widths.join('-')}`;
    line(`${subject} loss + gradient`, interleaved([() => nets[0].gradient(w, outs[0]), () => nets[1].gradient(w, outs[1])], 9, reps), sameBits(outs[0], outs[1]));
    line(`${subject} Hv on a kept pass`, interleaved([() => nets[0].hvp(w, v, outs[0]), () => nets[1].hvp(w, v, outs[1])], 9, reps), sameBits(outs[0], outs[1]));
    const fresh = (s: number) => (): void => { nets[s].forgetPass(); nets[s].hvp(w, v, outs[s]); };
    line(`${subject} Hv from scratch`, interleaved([fresh(0), fresh(1)], 9, reps), sameBits(outs[0], outs[1]));
  }
  for (const [n, fanIn, units] of [[512, 256, 256], [512, 64, 256], [512, 256, 10], [256, 64, 64]]) {
    const P = units * fanIn + units;
    const spaces = [oldKernels.matrixKernels, matrixKernels].map((make) => {
      const s = make([P, n * fanIn, n * units, n * fanIn, P], Math.max(fanIn, units));
      const rng = Rng.fromSeed(3);
      for (const a of s.arrays) rng.fillNormal(a);
      return s;
    });
    const p = { fanIn, units, wOff: 0, bOff: units * fanIn };
    const reps = Math.max(1, Math.round(2e7 / (2 * n * fanIn * units)));
    const shape = `${n} rows × ${fanIn} in × ${units} out`;
    const run = (what: 'dense' | 'outer' | 'backprop') => (s: number) => (): void => {
      const { kernels, arrays: [w, xs, d, out, g] } = spaces[s];
      if (what === 'dense') kernels.dense(w, p, xs, n, d, true, false);
      else if (what === 'outer') kernels.outer(g, p, d, xs, n, true);
      else kernels.backprop(w, p, d, n, out, false);
    };
    for (const what of ['dense', 'outer', 'backprop'] as const) {
      const f = run(what);
      const t = interleaved([f(0), f(1)], 9, reps);
      // Both sides made the same calls in the same order, so every array must match.
      line(`${what} ${shape}`, t, spaces[0].arrays.every((a, i) => sameBits(a, spaces[1].arrays[i])));
    }
  }
}

main().catch((e: unknown) => {
  process.stderr.write(`${e instanceof Error ? e.message : String(e)}\n`);
  process.exit(1);
});
