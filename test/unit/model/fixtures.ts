/** Small seeded networks for tests: invented data, sizes that keep finite differences cheap. */
import { Network, type NetworkOptions } from '../../../src/core/model/network';
import { Rng } from '../../../src/core/rng';
import type { ActivationName, LossName } from '../../../src/core/setup';

export interface TinyNet {
  net: Network;
  w: Float64Array;
  rng: Rng;
}

/** A 3-input, two-hidden-layer network with K = 3 outputs over 7 seeded rows. */
export function tinyNet(act: ActivationName, loss: LossName, seed = 11, l2 = 0.05, options: NetworkOptions = {}): TinyNet {
  const rng = Rng.fromSeed(seed);
  const N = 7, D = 3, K = 3;
  const x = rng.fillNormal(new Float64Array(N * D));
  const tw = loss === 'cross-entropy' ? 1 : K;
  const y = new Float64Array(N * tw);
  for (let i = 0; i < y.length; i++) {
    y[i] = loss === 'cross-entropy' ? rng.int(K) : loss === 'binary-cross-entropy' ? rng.uniform() : rng.normal();
  }
  const net = new Network(
    { kind: 'network', inputs: D, layers: [{ units: 4, activation: act }, { units: 5, activation: act }, { units: K, activation: 'linear' }], init: 'lecun-normal', gain: 1 },
    { rows: N, inputs: D, targets: tw, x, y },
    loss,
    l2,
    options,
  );
  const w = rng.fillNormal(new Float64Array(net.parameterCount));
  return { net, w, rng };
}

/** max |a − b| / max |b| over two vectors. */
export function relDiff(a: Float64Array, b: Float64Array): number {
  let e = 0, s = 0;
  for (let i = 0; i < a.length; i++) { e = Math.max(e, Math.abs(a[i] - b[i])); s = Math.max(s, Math.abs(b[i])); }
  return e / Math.max(s, 1e-300);
}
