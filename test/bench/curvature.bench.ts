/**
 * Curvature timings of Stepwell alone (the side-by-side figures against NumPy and SciPy are in
 * `compare.ts`): the dense solver with eigenvectors, the whole curvature readout (Lanczos at both
 * ends, spectral density, trace) and the dense Hessian spectrum of the small network.
 */
import { Rng } from '../../src/core/rng';
import { buildMlp, type MlpShape } from './networks';
import { randomSymmetric } from '../reference/curvature/fixtures';
import { symmetricEigen } from '../../src/core/linalg/symmetric-eigen';
import { denseSpectrum, measureCurvature } from '../../src/core/probe/curvature';
import { RECIPE_DEFAULTS } from '../../src/experiment';
import type { Recipe } from '../../src/core/setup';
import type { BenchResult } from './types';

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
}

const MLPS: MlpCase[] = [
  { widths: [4, 16, 16, 1], act: 'tanh', loss: 'mse', batch: 64, dense: true },
  // Dense P = 5 699 takes a minute and 260 MB: only with STEPWELL_BENCH_FULL=1.
  { widths: [20, 64, 64, 3], act: 'tanh', loss: 'cross-entropy', batch: 256, dense: process.env.STEPWELL_BENCH_FULL === '1' },
  { widths: [64, 256, 256, 10], act: 'relu', loss: 'cross-entropy', batch: 512, dense: false },
];

/**
 * Figures: the dense solver with the top-10 and with all eigenvectors (n = 370, 1000, 2000 /
 * 370, 1000), process CPU time of single runs beside wall time; for each MLP the whole curvature
 * readout as the cell runs it at P above the dense limit (Lanczos at both ends, SLQ density,
 * Hutchinson trace: `measureCurvature` with its defaults) or the dense spectrum below it.
 */
export function run(): BenchResult[] {
  const out: BenchResult[] = [];
  for (const n of [370, 1000, 2000]) {
    const a = randomSymmetric(n, n);
    const tv = once(() => symmetricEigen(a, n, { topVectors: 10 }));
    out.push({ name: `dense eigenvalues + top-10 eigenvectors n = ${n}`, ms: tv.ms, reps: 1, extra: cpu(tv) });
    if (n <= 1000) {
      const tf = once(() => symmetricEigen(a, n, { vectors: true }));
      out.push({ name: `dense eigenvalues + all eigenvectors n = ${n}`, ms: tf.ms, reps: 1, extra: cpu(tf) });
    }
  }
  const recipe: Recipe = { ...RECIPE_DEFAULTS, optimizer: 'sgd', lr: 0.01, layers: [], schedule: { kind: 'constant' } };
  for (const c of MLPS) {
    const { net, w } = buildMlp(c, 11);
    const p = net.parameterCount;
    const label = `${c.widths.join('-')} ${c.act}, ${c.loss}, batch ${c.batch} (P = ${p})`;
    let products = 0;
    let lmax = 0;
    const t = once(() => {
      const r = measureCurvature(net, w, recipe, Rng.fromSeed(1), { denseLimit: c.dense ? p : 2000 });
      products = r.spectrum.products;
      lmax = r.summary.lambdaMax;
    });
    out.push({ name: `curvature readout ${label}`, ms: t.ms, reps: 1, extra: { Hv: products, 'λmax': lmax.toPrecision(6), ...cpu(t) } });
    if (c.dense) {
      let asym = 0;
      const td = once(() => {
        asym = denseSpectrum(net, w, undefined, 'hessian', { limit: p }).asymmetry;
      });
      out.push({ name: `dense Hessian spectrum ${label}`, ms: td.ms, reps: 1, extra: { Hv: p, asymmetry: asym.toExponential(1), ...cpu(td) } });
    }
  }
  out.push(...blockPasses());
  return out;
}

/** Shapes for the block passes: narrow layers, with few or many inputs (on by default), and MLP b's (off by default). */
const BLOCK_SHAPES: MlpShape[] = [
  { widths: [4, 16, 16, 1], act: 'tanh', loss: 'mse', batch: 64 },
  { widths: [8, 32, 32, 2], act: 'tanh', loss: 'cross-entropy', batch: 256 },
  { widths: [784, 32, 32, 10], act: 'relu', loss: 'cross-entropy', batch: 128 },
  { widths: [20, 64, 64, 3], act: 'tanh', loss: 'cross-entropy', batch: 256 },
];

/**
 * Block passes (`Network.curvatureBlock`) against one product at a time, on the same weights:
 * 64 Hessian products with seeded normal directions, and 64 neighbouring columns of a dense
 * Hessian (unit vectors), alternating the two networks round by round; median per product.
 * A shape whose default is no blocks is timed with blocks of 8, to show why.
 */
export function blockPasses(): BenchResult[] {
  const out: BenchResult[] = [];
  const count = 64;
  for (const c of BLOCK_SHAPES) {
    const single = buildMlp(c, 11, true, 1);
    const byDefault = buildMlp(c, 11).net;
    const k = byDefault.blockSize > 1 ? byDefault.blockSize : 8;
    const blocked = buildMlp(c, 11, true, k).net;
    const { w } = single;
    const P = single.net.parameterCount;
    const rng = Rng.fromSeed(4);
    const kinds: Array<[string, Float64Array[]]> = [
      ['normal directions', Array.from({ length: count }, () => rng.fillNormal(new Float64Array(P)))],
      ['dense-Hessian columns', Array.from({ length: count }, (_, j) => Float64Array.from({ length: P }, (_, i) => (i === j + Math.floor(P / 3) ? 1 : 0)))],
    ];
    for (const [what, vs] of kinds) {
      const outs = vs.map(() => new Float64Array(P));
      const times: [number[], number[]] = [[], []];
      const nets = [single.net, blocked];
      for (const net of nets) net.curvatureBlock('hessian', w, vs, outs);
      for (let round = 0; round < 15; round++) {
        nets.forEach((net, i) => {
          const t = performance.now();
          net.curvatureBlock('hessian', w, vs, outs);
          times[i].push((performance.now() - t) / count);
        });
      }
      const med = (xs: number[]): number => [...xs].sort((a, b) => a - b)[xs.length >> 1];
      const [one, many] = times.map(med);
      const label = `${c.widths.join('-')} ${c.act}, batch ${c.batch} (P = ${P})`;
      out.push({ name: `Hessian product, ${what}, one at a time: ${label}`, ms: one, reps: 15 });
      out.push({
        name: `Hessian product, ${what}, in block passes of ${k}${byDefault.blockSize > 1 ? '' : ' (not the default)'}: ${label}`,
        ms: many,
        reps: 15,
        extra: { 'one at a time ÷ block': (one / many).toFixed(2) },
      });
    }
  }
  return out;
}
