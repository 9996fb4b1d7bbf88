/** Gradient and Hessian-vector product timings of the network core. */
import { Rng } from '../../src/core/rng';
import { buildMlp, type MlpShape } from './networks';
import { timeIt, type BenchResult } from './types';

export const title = 'Network core: gradient and Hessian-vector product';

interface Case extends MlpShape {
  /** PyTorch 1.13 CPU, float64, one thread, gradient only (figures from the issue, measured on this kind of machine). */
  torchGradMs?: number;
}

const cases: Case[] = [
  { widths: [4, 16, 16, 1], act: 'tanh', loss: 'mse', batch: 64, torchGradMs: 0.27 },
  { widths: [20, 64, 64, 3], act: 'tanh', loss: 'cross-entropy', batch: 256, torchGradMs: 1.0 },
  { widths: [64, 256, 256, 10], act: 'relu', loss: 'cross-entropy', batch: 512 },
];

export function run(): BenchResult[] {
  const out: BenchResult[] = [];
  for (const c of cases) {
    const { net, w } = buildMlp(c, 1);
    const P = net.parameterCount;
    const g = new Float64Array(P), v = Rng.fromSeed(2).fillNormal(new Float64Array(P)), hv = new Float64Array(P);
    const label = `${c.widths.join('-')} ${c.act}, ${c.loss}, batch ${c.batch} (P = ${P})`;
    const tg = timeIt(() => net.gradient(w, g));
    out.push({ name: `gradient ${label}`, ...tg, reference: c.torchGradMs ? { ms: c.torchGradMs, what: 'PyTorch 1.13 CPU float64, 1 thread' } : undefined });
    const th = timeIt(() => net.hvp(w, v, hv));
    out.push({ name: `Hessian-vector product ${label}`, ...th, extra: { 'Hv / gradient': (th.ms / tg.ms).toFixed(2) } });
  }
  return out;
}
