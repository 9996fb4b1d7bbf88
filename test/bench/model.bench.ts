/** Gradient and Hessian-vector product timings of the network core. */
import { Network } from '../../src/core/model/network';
import { initNetwork } from '../../src/core/model/init';
import { Rng } from '../../src/core/rng';
import type { ActivationName, LossName, NetworkModel } from '../../src/core/setup';
import { timeIt, type BenchResult } from './types';

export const title = 'Network core: gradient and Hessian-vector product';

interface Case {
  widths: number[];
  act: ActivationName;
  loss: LossName;
  batch: number;
  /** PyTorch 1.13 CPU, float64, one thread, gradient only (figures from the issue, measured on this kind of machine). */
  torchGradMs?: number;
}

const cases: Case[] = [
  { widths: [4, 16, 16, 1], act: 'tanh', loss: 'mse', batch: 64, torchGradMs: 0.27 },
  { widths: [20, 64, 64, 3], act: 'tanh', loss: 'cross-entropy', batch: 256, torchGradMs: 1.0 },
  { widths: [64, 256, 256, 10], act: 'relu', loss: 'cross-entropy', batch: 512 },
];

function build(c: Case): { net: Network; w: Float64Array } {
  const rng = Rng.fromSeed(1);
  const [inputs, ...units] = c.widths;
  const model: NetworkModel = { kind: 'network', inputs, layers: units.map((u, i) => ({ units: u, activation: i === units.length - 1 ? 'linear' : c.act })), init: 'lecun-normal', gain: 1 };
  const k = units[units.length - 1];
  const x = rng.fillNormal(new Float64Array(c.batch * inputs));
  const y = new Float64Array(c.loss === 'cross-entropy' ? c.batch : c.batch * k);
  for (let i = 0; i < y.length; i++) y[i] = c.loss === 'cross-entropy' ? rng.int(k) : rng.normal();
  const net = new Network(model, { rows: c.batch, inputs, targets: c.loss === 'cross-entropy' ? 1 : k, x, y }, c.loss, 0);
  return { net, w: initNetwork(model, rng) };
}

export function run(): BenchResult[] {
  const out: BenchResult[] = [];
  for (const c of cases) {
    const { net, w } = build(c);
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
