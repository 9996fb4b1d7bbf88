/**
 * Curvature timings: the dense symmetric eigen-solver on random matrices, and the curvature
 * readouts (top-10 Lanczos, dense spectrum) on seeded random MLPs of three sizes.
 * Reference figures (PyTorch 1.13 + SciPy, one thread, float64) are the ones stated in the issue.
 */
import { Rng } from '../../src/core/rng';
import { buildMlp, type MlpShape } from './networks';
import { randomSymmetric } from '../reference/curvature/fixtures';
import { symmetricEigen } from '../../src/core/linalg/symmetric-eigen';
import { lanczosExtremes } from '../../src/core/linalg/lanczos';
import { curvatureOperator, denseSpectrum } from '../../src/core/probe/curvature';
import { timeIt, type BenchResult } from './types';

export const title = 'Curvature: dense eigen-solver, Lanczos and dense spectra of MLP Hessians';

/** One timed run (for work too long to repeat); also the process CPU time, less sensitive to a loaded machine. */
function once(fn: () => void): { ms: number; reps: number; cpuMs: number } {
  const c = process.cpuUsage();
  const t = performance.now();
  fn();
  const ms = performance.now() - t;
  const u = process.cpuUsage(c);
  return { ms, reps: 1, cpuMs: (u.user + u.system) / 1000 };
}

function cpu(t: { ms: number; cpuMs?: number }): Record<string, string> {
  return t.cpuMs === undefined ? {} : { 'cpu ms': t.cpuMs.toFixed(0) };
}

interface MlpCase extends MlpShape {
  dense: boolean;
  /** PyTorch + scipy eigsh top-10 figures from the issue. */
  reference?: { ms: number; what: string };
}

const MLPS: MlpCase[] = [
  { widths: [4, 16, 16, 1], act: 'tanh', loss: 'mse', batch: 64, dense: true },
  // Dense P = 5 699 takes minutes and 260 MB: only with STEPWELL_BENCH_FULL=1.
  { widths: [20, 64, 64, 3], act: 'tanh', loss: 'cross-entropy', batch: 256, dense: process.env.STEPWELL_BENCH_FULL === '1', reference: { ms: 210, what: 'PyTorch 1.13 + scipy eigsh top-10, 117 Hv, 1 thread' } },
  { widths: [64, 256, 256, 10], act: 'relu', loss: 'cross-entropy', batch: 512, dense: false },
];

/**
 * Figures: `dense eigenvalues n = …` (values only) for n = 370, 1000, 2000 (reference: LAPACK
 * eigvalsh 2000×2000, 1.0 s), with the top-10 eigenvectors, and with all eigenvectors for
 * n = 370, 1000; `extra['cpu ms']` is the process CPU time of single runs. For each MLP the top-10 Lanczos
 * time (tol 1e-10, with the Hessian-vector product count in `extra.Hv`) and, for the two smaller
 * ones, the dense spectrum (P products + eigen-solve; the P = 5 699 case takes minutes and 260 MB,
 * so it runs only with STEPWELL_BENCH_FULL=1).
 */
export function run(): BenchResult[] {
  const out: BenchResult[] = [];
  for (const n of [370, 1000, 2000]) {
    const a = randomSymmetric(n, n);
    const t = n <= 370 ? timeIt(() => symmetricEigen(a, n), 1500, 20) : once(() => symmetricEigen(a, n));
    out.push({
      name: `dense eigenvalues n = ${n}`,
      ms: t.ms,
      reps: t.reps,
      reference: n === 2000 ? { ms: 1000, what: 'LAPACK eigvalsh via PyTorch, 1 thread' } : undefined,
      extra: { 'ns per n³/6 update': ((t.ms * 1e6) / ((n * n * n) / 6)).toFixed(2), ...cpu(t) },
    });
    const tv = once(() => symmetricEigen(a, n, { topVectors: 10 }));
    out.push({ name: `dense eigenvalues + top-10 eigenvectors n = ${n}`, ms: tv.ms, reps: 1, extra: cpu(tv) });
    if (n <= 1000) {
      const tf = once(() => symmetricEigen(a, n, { vectors: true }));
      out.push({ name: `dense eigenvalues + all eigenvectors n = ${n}`, ms: tf.ms, reps: 1, extra: cpu(tf) });
    }
  }
  for (const c of MLPS) {
    const { net, w } = buildMlp(c, 11);
    const p = net.parameterCount;
    const label = `${c.widths.join('-')} ${c.act}, ${c.loss}, batch ${c.batch} (P = ${p})`;
    let hv = 0;
    let iterations = 0;
    let lmax = 0;
    const t = once(() => {
      const op = curvatureOperator(net, w);
      const r = lanczosExtremes(op.apply, p, Rng.fromSeed(1), { k: 10, tol: 1e-10 });
      hv = op.count();
      iterations = r.iterations;
      lmax = r.largest[0].value;
    });
    out.push({ name: `top-10 Lanczos ${label}`, ms: t.ms, reps: 1, reference: c.reference, extra: { Hv: hv, iterations, 'λmax': lmax.toPrecision(6), ...cpu(t) } });
    if (c.dense) {
      let asym = 0;
      const td = once(() => {
        asym = denseSpectrum(net, w, undefined, 'hessian', { limit: p }).asymmetry;
      });
      out.push({ name: `dense Hessian spectrum ${label}`, ms: td.ms, reps: 1, extra: { Hv: p, asymmetry: asym.toExponential(1), ...cpu(td) } });
    }
  }
  return out;
}
