/**
 * Activation health of a dense network at given weights, from one forward pass over every data
 * row (`Network.inspectLayers`, so there is no second forward implementation): per layer the
 * pre-activation mean and spread, the share of saturated entries of tanh and sigmoid layers, the
 * share of dead units of ReLU-family layers, and a histogram of pre-activations on fixed bins.
 *
 * Definitions (thresholds and sources in `findings/thresholds.ts`):
 * - spread: population standard deviation over all rows × units entries of the layer;
 * - saturated share (tanh, sigmoid): share of entries with |a| beyond the near-linear zone
 *   (tanh |a| > 2, sigmoid |a| > 4, where the slope is below 7% of its peak);
 * - dead share (relu, leaky-relu): share of units whose pre-activation is ≤ 0 on every row
 *   (zero gradient for relu, 0.01 of it for leaky-relu), which needs all rows;
 * - histogram: bins of width 0.5 on [−6, 6), half-open [e_k, e_k+1), index ⌊(a + 6)/0.5⌋, plus
 *   counts below −6, at or above 6, and of non-finite entries.
 * Non-finite entries (a diverged run) are left out of mean, spread and shares and counted apart.
 */
import type { ActivationName, NetworkModel } from '../setup';
import type { Rows } from '../objective';
import { THRESHOLDS } from './findings/thresholds';

/** The forward-pass accessor {@link activationHealth} needs (`core/model/network.ts`'s `Network` has it). */
export interface LayerInspector {
  inspectLayers(w: Float64Array, rows: Rows, visit: (layer: number, pre: Float64Array, post: Float64Array, n: number) => void): void;
}

/** Fixed histogram bins of pre-activations (same edges at every step, so histograms compare). */
export const HISTOGRAM_EDGES: readonly number[] = Array.from({ length: 25 }, (_, k) => -6 + 0.5 * k);

/** Counts of pre-activations on {@link HISTOGRAM_EDGES}. */
export interface PreactivationHistogram {
  /** Bin edges (25 edges, 24 bins of width 0.5 on [−6, 6)). */
  edges: number[];
  /** counts[k] = entries in [edges[k], edges[k+1]). */
  counts: number[];
  /** Entries below edges[0]. */
  below: number;
  /** Entries at or above the last edge. */
  above: number;
  /** NaN or infinite entries. */
  nonFinite: number;
}

/** Activation health of one layer. */
export interface LayerActivationHealth {
  layer: number;
  activation: ActivationName;
  units: number;
  /** Rows the statistics are over. */
  rows: number;
  /** Mean and population spread of the pre-activations a = W h + b (finite entries). */
  preMean: number;
  preSpread: number;
  /** Mean and population spread of the outputs h = f(a) (finite entries). */
  postMean: number;
  postSpread: number;
  /** Share of finite entries beyond the saturation threshold (tanh, sigmoid), else null. */
  saturatedShare: number | null;
  /** |a| beyond which an entry counts as saturated (tanh 2, sigmoid 4), else null. */
  saturationThreshold: number | null;
  /** Share of units with a ≤ 0 on every row (relu, leaky-relu), else null. */
  deadShare: number | null;
  /** Indices of the dead units (at most 64 listed). */
  deadUnits: number[];
  histogram: PreactivationHistogram;
}

/** Activation health of every layer at one set of weights. */
export interface ActivationHealth {
  /** Step the weights belong to (null when the caller did not say). */
  step: number | null;
  rows: number;
  layers: LayerActivationHealth[];
}

/** Saturation threshold |a| of an activation, or null when it does not saturate on both sides. */
export function saturationThreshold(name: ActivationName): number | null {
  switch (name) {
    case 'tanh':
      return THRESHOLDS.tanhSaturation.value;
    case 'sigmoid':
      return THRESHOLDS.sigmoidSaturation.value;
    case 'linear':
    case 'relu':
    case 'leaky-relu':
    case 'softplus':
    case 'elu':
    case 'gelu':
    case 'expression': // the user's function: no known saturation zone
      return null;
    default: {
      const never: never = name;
      throw new Error(`unknown activation '${String(never)}'`);
    }
  }
}

/** True for the ReLU family whose units can die (inactive, a ≤ 0, on every row). */
export function canDie(name: ActivationName): boolean {
  return name === 'relu' || name === 'leaky-relu';
}

const MAX_LISTED = 64;

/** Statistics of one layer's `n × units` pre-activations and outputs. */
export function layerHealth(layer: number, activation: ActivationName, units: number, pre: Float64Array, post: Float64Array, n: number): LayerActivationHealth {
  const lo = HISTOGRAM_EDGES[0];
  const bins = HISTOGRAM_EDGES.length - 1;
  const width = HISTOGRAM_EDGES[1] - HISTOGRAM_EDGES[0];
  const counts = new Array<number>(bins).fill(0);
  let below = 0;
  let above = 0;
  let nonFinite = 0;
  let count = 0;
  let sum = 0;
  let postCount = 0;
  let postSum = 0;
  const m = n * units;
  for (let i = 0; i < m; i++) {
    const a = pre[i];
    if (!Number.isFinite(a)) {
      nonFinite++;
    } else {
      count++;
      sum += a;
      if (a < lo) below++;
      else {
        const k = Math.floor((a - lo) / width);
        if (k >= bins) above++;
        else counts[k]++;
      }
    }
    const h = post[i];
    if (Number.isFinite(h)) {
      postCount++;
      postSum += h;
    }
  }
  const preMean = count > 0 ? sum / count : NaN;
  const postMean = postCount > 0 ? postSum / postCount : NaN;
  let q = 0;
  let pq = 0;
  const sat = saturationThreshold(activation);
  let saturated = 0;
  for (let i = 0; i < m; i++) {
    const a = pre[i];
    if (Number.isFinite(a)) {
      q += (a - preMean) * (a - preMean);
      if (sat !== null && Math.abs(a) > sat) saturated++;
    }
    const h = post[i];
    if (Number.isFinite(h)) pq += (h - postMean) * (h - postMean);
  }
  let deadShare: number | null = null;
  const deadUnits: number[] = [];
  if (canDie(activation)) {
    let dead = 0;
    for (let u = 0; u < units; u++) {
      let alive = false;
      for (let r = 0; r < n && !alive; r++) if (pre[r * units + u] > 0) alive = true;
      if (!alive) {
        dead++;
        if (deadUnits.length < MAX_LISTED) deadUnits.push(u);
      }
    }
    deadShare = dead / units;
  }
  return {
    layer, activation, units, rows: n,
    preMean, preSpread: count > 0 ? Math.sqrt(q / count) : NaN,
    postMean, postSpread: postCount > 0 ? Math.sqrt(pq / postCount) : NaN,
    saturatedShare: sat === null ? null : count > 0 ? saturated / count : NaN,
    saturationThreshold: sat,
    deadShare, deadUnits,
    histogram: { edges: [...HISTOGRAM_EDGES], counts, below, above, nonFinite },
  };
}

/**
 * Activation health of every layer of `net` at weights `w`, over all rows (or `rows`).
 *
 * @param model - the network's layer list (activations and widths).
 * @param step - the step the weights belong to, recorded in the result.
 */
export function activationHealth(net: LayerInspector, model: NetworkModel, w: Float64Array, step: number | null = null, rows?: Rows): ActivationHealth {
  const layers: LayerActivationHealth[] = [];
  let count = 0;
  net.inspectLayers(w, rows, (l, pre, post, n) => {
    count = n;
    layers.push(layerHealth(l, model.layers[l].activation, model.layers[l].units, pre, post, n));
  });
  return { step, rows: count, layers };
}
