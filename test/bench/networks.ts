/** Seeded random MLPs of the sizes the benchmarks share (data of our own; only shapes matter). */
import { Network } from '../../src/core/model/network';
import { initNetwork } from '../../src/core/model/init';
import { Rng } from '../../src/core/rng';
import type { ActivationName, DataSetup, LossName, NetworkModel } from '../../src/core/setup';

/** Shape of a benchmark network: widths from inputs to outputs, hidden activation, loss, rows. */
export interface MlpShape {
  widths: number[];
  act: ActivationName;
  loss: LossName;
  batch: number;
}

/** The model, seeded normal rows (inputs and targets) and lecun-normal weights of a benchmark network, without building it. */
export function mlpSetup(c: MlpShape, seed: number): { model: NetworkModel; data: DataSetup; w: Float64Array } {
  const rng = Rng.fromSeed(seed);
  const [inputs, ...units] = c.widths;
  const model: NetworkModel = { kind: 'network', inputs, layers: units.map((u, i) => ({ units: u, activation: i === units.length - 1 ? 'linear' : c.act })), init: 'lecun-normal', gain: 1 };
  const k = units[units.length - 1];
  const ce = c.loss === 'cross-entropy';
  const x = rng.fillNormal(new Float64Array(c.batch * inputs));
  const y = new Float64Array(ce ? c.batch : c.batch * k);
  for (let i = 0; i < y.length; i++) y[i] = ce ? rng.int(k) : rng.normal();
  return { model, data: { rows: c.batch, inputs, targets: ce ? 1 : k, x, y }, w: initNetwork(model, rng) };
}

/** Builds the network over seeded normal inputs and targets, with lecun-normal weights (`blockSize` as in `NetworkOptions`). */
export function buildMlp(c: MlpShape, seed: number, simd = true, blockSize?: number): { net: Network; w: Float64Array; x: Float64Array; y: Float64Array } {
  const { model, data, w } = mlpSetup(c, seed);
  return { net: new Network(model, data, c.loss, 0, { simd, blockSize }), w, x: data.x, y: data.y };
}
