/**
 * The elementary functions on the stepping path: every activation over a large slice, the
 * two losses that call exp/log, and normal draws. Compares with the cost of the whole step
 * in `session.bench.ts` to show what the engine-independent functions cost.
 */
import { ACTIVATIONS, activation } from '../../src/core/model/activations';
import { lossFunction } from '../../src/core/model/losses';
import { Rng } from '../../src/core/rng';
import { timeIt, type BenchResult } from './types';

export const title = 'Elementary functions: activations, losses and normal draws (10⁵ elements)';

const N = 100_000;

export function run(): BenchResult[] {
  const out: BenchResult[] = [];
  const rng = Rng.fromSeed(7);
  const a = new Float64Array(N);
  for (let i = 0; i < N; i++) a[i] = 6 * (2 * rng.uniform() - 1);
  const f = new Float64Array(N), d1 = new Float64Array(N), d2 = new Float64Array(N);
  for (const name of ACTIVATIONS) {
    const act = activation(name);
    out.push({ name: `activation ${name}: f, f′, f″`, ...timeIt(() => act.evaluate(a, f, d1, d2, N)) });
  }
  const k = 10, rows = N / k;
  const y = new Float64Array(rows);
  for (let i = 0; i < rows; i++) y[i] = rng.int(k);
  const ce = lossFunction('cross-entropy');
  out.push({ name: `cross-entropy gradient, ${rows} rows × ${k} classes`, ...timeIt(() => ce.gradient(a, y, rows, k, f)) });
  const yb = new Float64Array(N);
  for (let i = 0; i < N; i++) yb[i] = rng.uniform() < 0.5 ? 0 : 1;
  const bce = lossFunction('binary-cross-entropy');
  out.push({ name: `binary cross-entropy gradient, ${N} outputs`, ...timeIt(() => bce.gradient(a, yb, N, 1, f)) });
  out.push({ name: `normal draws`, ...timeIt(() => rng.fillNormal(f)) });
  return out;
}
