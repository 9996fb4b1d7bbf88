/**
 * Stepwell against PyTorch (and NumPy / SciPy) on identical inputs, measured now and
 * interleaved: for every row the two sides take turns, a batch of repetitions each, for several
 * rounds, and each repetition's wall-clock and process CPU time is kept. A row's ratio is
 * Stepwell's median over PyTorch's median (below 1: Stepwell is faster). Both sides run one
 * thread (`torch.set_num_threads(1)`, OMP/OpenBLAS/MKL threads 1). Each row also compares a
 * number both sides computed (a loss, a norm, an eigenvalue) so that different inputs cannot
 * pass as a speed-up.
 */
import { loadavg } from 'node:os';
import { Rng } from '../../src/core/rng';
import { Session } from '../../src/core/session';
import { parseSpecValue } from '../../src/experiment';
import { lanczosExtremes } from '../../src/core/linalg/lanczos';
import { eigenvalues } from '../../src/core/linalg/symmetric-eigen';
import { curvatureOperator } from '../../src/core/probe/curvature';
import { randomSymmetric } from '../reference/curvature/fixtures';
import { buildMlp, type MlpShape } from './networks';
import { Reference, type Timing } from './reference-process';

/** One compared row. */
export interface ComparedRow {
  /** Which work (`loss + gradient`, `Hv from scratch`, …). */
  work: string;
  /** Which case (`MLP a 4-16-16-1 (P 369)`, `n = 2000`). */
  subject: string;
  stepwell: Summary;
  reference: Summary;
  /** Stepwell's median wall time over the reference's. */
  ratio: number;
  /** The same for process CPU time. */
  cpuRatio: number;
  /** The check numbers of both sides (e.g. both losses). */
  check: { stepwell: Record<string, number>; reference: Record<string, number> };
  /** One-minute load average when the row finished. */
  load: number;
}

/** Medians and counts of one side's repetitions. */
export interface Summary {
  wallMs: number;
  cpuMs: number;
  reps: number;
}

export interface MlpCase extends MlpShape {
  name: string;
}

/** The three networks of the speed targets (shapes and losses; data and weights seeded, our own). */
export const MLPS: MlpCase[] = [
  { name: 'MLP a', widths: [4, 16, 16, 1], act: 'tanh', loss: 'mse', batch: 64 },
  { name: 'MLP b', widths: [20, 64, 64, 3], act: 'tanh', loss: 'cross-entropy', batch: 256 },
  { name: 'MLP c', widths: [64, 256, 256, 10], act: 'relu', loss: 'cross-entropy', batch: 512 },
];

const median = (xs: number[]): number => {
  const s = [...xs].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 === 1 ? s[m] : 0.5 * (s[m - 1] + s[m]);
};

/** Times `fn` `reps` times on this side: wall clock and process CPU per repetition. */
function timeHere(fn: () => void, reps: number): Timing & { check: Record<string, number> } {
  const wall: number[] = [];
  const cpu: number[] = [];
  for (let i = 0; i < reps; i++) {
    const c = process.cpuUsage();
    const t = performance.now();
    fn();
    wall.push(performance.now() - t);
    const u = process.cpuUsage(c);
    cpu.push((u.user + u.system) / 1000);
  }
  return { wall, cpu, check: {} };
}

interface Turn {
  /** Runs Stepwell `reps` times; returns its timings and check numbers. */
  here(reps: number): Timing;
  /** Asks the reference for `reps` repetitions. */
  there(reps: number): Promise<Timing>;
}

/**
 * Alternates the two sides for `rounds` rounds. Repetitions per round are chosen from a first
 * untimed call of each side so a round takes about `budgetMs` (at least one repetition).
 */
async function interleave(only: RegExp | undefined, work: string, subject: string, turn: Turn, rounds: number, budgetMs: number): Promise<ComparedRow | null> {
  if (only !== undefined && !only.test(`${work} ${subject}`)) return null;
  const probeHere = turn.here(1);
  const probeThere = await turn.there(1);
  const repsHere = Math.max(1, Math.min(200, Math.round(budgetMs / Math.max(probeHere.wall[0], 1e-3))));
  const repsThere = Math.max(1, Math.min(200, Math.round(budgetMs / Math.max(probeThere.wall[0], 1e-3))));
  const here: Timing = { wall: [], cpu: [], check: probeHere.check };
  const there: Timing = { wall: [], cpu: [], check: probeThere.check };
  for (let r = 0; r < rounds; r++) {
    const a = turn.here(repsHere);
    here.wall.push(...a.wall);
    here.cpu.push(...a.cpu);
    const b = await turn.there(repsThere);
    there.wall.push(...b.wall);
    there.cpu.push(...b.cpu);
  }
  const s = (t: Timing): Summary => ({ wallMs: median(t.wall), cpuMs: median(t.cpu), reps: t.wall.length });
  const row: ComparedRow = {
    work,
    subject,
    stepwell: s(here),
    reference: s(there),
    ratio: median(here.wall) / median(there.wall),
    cpuRatio: median(here.cpu) / median(there.cpu),
    check: { stepwell: here.check, reference: there.check },
    load: loadavg()[0],
  };
  process.stdout.write(`${work.padEnd(28)} ${subject.padEnd(30)} stepwell ${row.stepwell.wallMs.toPrecision(4).padStart(9)} ms  reference ${row.reference.wallMs.toPrecision(4).padStart(9)} ms  ratio ${row.ratio.toFixed(2)} (cpu ${row.cpuRatio.toFixed(2)})  load ${row.load.toFixed(2)}\n`);
  return row;
}

/** A spec over the bench network's data (inline rows) for a session with `recipe`. */
function sessionFor(c: MlpCase, x: Float64Array, y: Float64Array, recipe: Record<string, unknown>): Session {
  const [inputs, ...units] = c.widths;
  const k = units[units.length - 1];
  const rows = Array.from({ length: c.batch }, (_, r) => Array.from(x.subarray(r * inputs, (r + 1) * inputs)));
  const targets = c.loss === 'cross-entropy' ? Array.from(y) : Array.from({ length: c.batch }, (_, r) => Array.from(y.subarray(r * k, (r + 1) * k)));
  const spec = {
    seed: 3,
    model: { inputs, layers: units.map((u, i) => ({ units: u, activation: i === units.length - 1 ? 'linear' : c.act })) },
    data: { x: rows, y: targets },
    loss: c.loss,
    recipe,
  };
  const r = parseSpecValue(spec);
  if (!r.ok) throw new Error(r.errors.map((e) => `${e.path}: ${e.message}`).join('; '));
  return Session.create(r.experiment);
}

/** Options of {@link compare}. */
export interface CompareOptions {
  /** Rounds per row (default 5). */
  rounds?: number;
  /** Target milliseconds per side and round (default 300). */
  budgetMs?: number;
  /** Which MLPs (default all three). */
  mlps?: MlpCase[];
  /** Dense eigenvalue orders (default 370, 1000, 2000). */
  orders?: number[];
  /** Only the rows whose "work subject" matches (default: every row; `npm run bench -- compare` reads it from STEPWELL_BENCH_ROWS). */
  only?: RegExp;
}

/** Runs every compared row; returns the rows and the reference's library versions. */
export async function compare(options: CompareOptions = {}): Promise<{ rows: ComparedRow[]; versions: Record<string, string | null> }> {
  const rounds = options.rounds ?? 5;
  const budget = options.budgetMs ?? 300;
  const ref = new Reference();
  const rows: ComparedRow[] = [];
  const only = options.only;
  const add = (row: ComparedRow | null): void => {
    if (row !== null) rows.push(row);
  };
  try {
    const versions = await ref.ask<Record<string, string | null>>({ cmd: 'versions' });
    for (const c of options.mlps ?? MLPS) {
      const { net, w, x, y } = buildMlp(c, 1);
      const P = net.parameterCount;
      const subject = `${c.name} ${c.widths.join('-')} (P ${P})`;
      const mlp = (weights: Float64Array): Promise<unknown> =>
        ref.ask({ cmd: 'mlp', widths: c.widths, act: c.act, loss: c.loss, rows: c.batch, x: ref.file(x), y: ref.file(y), w: ref.file(weights) });
      await mlp(w);
      const g = new Float64Array(P);
      const v = Rng.fromSeed(2).fillNormal(new Float64Array(P));
      const hv = new Float64Array(P);
      const vFile = ref.file(v);
      const norm = (a: Float64Array): number => Math.sqrt(a.reduce((s, t) => s + t * t, 0));
      add(await interleave(only, 'loss + gradient', subject, {
        here: (reps) => { let f = 0; const t = timeHere(() => { f = net.gradient(w, g); }, reps); t.check.loss = f; return t; },
        there: (reps) => ref.ask<Timing>({ cmd: 'time', what: 'grad', reps }),
      }, rounds, budget));
      add(await interleave(only, 'Hv from scratch', subject, {
        here: (reps) => { const t = timeHere(() => { net.forgetPass(); net.hvp(w, v, hv); }, reps); t.check.hvNorm = norm(hv); return t; },
        there: (reps) => ref.ask<Timing>({ cmd: 'time', what: 'hv-fresh', reps, v: vFile }),
      }, rounds, budget));
      net.hvp(w, v, hv);
      add(await interleave(only, 'Hv on a kept pass', subject, {
        here: (reps) => { const t = timeHere(() => net.hvp(w, v, hv), reps); t.check.hvNorm = norm(hv); return t; },
        there: (reps) => ref.ask<Timing>({ cmd: 'time', what: 'hv-kept', reps, v: vFile }),
      }, rounds, budget));
      for (const [what, recipe] of [['sgd', { optimizer: 'sgd', lr: 0.01 }], ['adam', { optimizer: 'adam', lr: 0.001 }]] as const) {
        const fresh = (): Session => sessionFor(c, x, y, recipe);
        let s = fresh();
        await mlp(Float64Array.from(s.parameters));
        add(await interleave(only, `${what === 'sgd' ? 'SGD' : 'Adam'} step (full batch)`, subject, {
          here: (reps) => {
            // A session's first step also evaluates the gradient at its starting weights (later
            // steps reuse the one evaluated at the end of the step before), so it runs untimed:
            // the rows time the steady state, one gradient per step, as the reference's loop.
            s = fresh();
            const firstLoss = s.step(1)[0].batchLoss;
            const t = timeHere(() => s.step(1), reps);
            t.check.firstLoss = firstLoss;
            return t;
          },
          there: (reps) => ref.ask<Timing>({ cmd: 'time', what, reps, lr: recipe.lr }),
        }, rounds, budget));
      }
      await mlp(w);
      const start = Rng.fromSeed(1).fillNormal(new Float64Array(P));
      const startFile = ref.file(start);
      add(await interleave(only, 'top-10 Lanczos', subject, {
        here: (reps) => {
          let products = 0;
          let lmax = 0;
          const t = timeHere(() => {
            net.forgetPass();
            const op = curvatureOperator(net, w);
            const r = lanczosExtremes(op.apply, P, Rng.fromSeed(1), { k: 10, tol: 1e-10 });
            products = op.count();
            lmax = r.largest[0].value;
          }, reps);
          t.check = { lambdaMax: lmax, products };
          return t;
        },
        there: (reps) => ref.ask<Timing>({ cmd: 'time', what: 'lanczos', reps, k: 10, tol: 1e-10, v0: startFile }),
      }, Math.min(rounds, P > 20000 ? 2 : rounds), budget));
    }
    for (const n of options.orders ?? [370, 1000, 2000]) {
      const a = randomSymmetric(n, n);
      await ref.ask({ cmd: 'matrix', n, a: ref.file(a) });
      add(await interleave(only, 'dense eigenvalues', `n = ${n}`, {
        here: (reps) => {
          let ev = new Float64Array(0);
          const t = timeHere(() => { ev = eigenvalues(a, n); }, reps);
          t.check = { max: ev[n - 1], min: ev[0] };
          return t;
        },
        there: (reps) => ref.ask<Timing>({ cmd: 'time', what: 'eigvalsh', reps }),
      }, n >= 2000 ? Math.min(rounds, 3) : rounds, budget));
    }
    return { rows, versions };
  } finally {
    await ref.close();
  }
}
