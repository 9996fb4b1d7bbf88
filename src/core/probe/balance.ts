/**
 * Layer balance over time, from the step records alone (no extra evaluation): a step × layer
 * table of log10(‖ΔW‖/‖W‖) against the band around 1e-3 of common practice (Stanford CS231n
 * notes), the ratio of every layer's gradient norm to the last layer's (gradients that shrink by
 * orders of magnitude towards the input vanish), and per-layer verdicts over the recent window.
 *
 * ‖ΔW‖/‖W‖ of record k is the update k made divided by ‖W‖ before it (`core/session/live.ts`);
 * record 0 made no update and is left out of the ratio table. Verdicts take the median over the
 * last `window` records that made an update: `high` above `updateRatioHigh`, `low` below
 * `updateRatioLow`, else `within` (thresholds in `findings/thresholds.ts`).
 */
import type { StepRecord } from '../state';
import { strideSelection } from '../session/trajectory';
import { THRESHOLDS } from './findings/thresholds';

/** Verdict of one layer's recent update ratio. */
export type RatioVerdict = 'high' | 'low' | 'within' | 'unknown';

/** The recent state of one layer. */
export interface LayerBalanceVerdict {
  layer: number;
  /** Median ‖ΔW‖/‖W‖ over the window (null when no finite ratio). */
  medianRatio: number | null;
  verdict: RatioVerdict;
  /** Step of the first record whose ratio lies beyond the verdict's threshold (null for within/unknown). */
  firstOutside: number | null;
  /** Median of ‖∇W_l‖ / ‖∇W_last‖ over the window (null when undefined). */
  medianDepthRatio: number | null;
  /** The same median over the first window (record 0 and the first updates), where an initialization shows. */
  earlyDepthRatio: number | null;
}

/** Result of {@link layerBalance}. */
export interface LayerBalance {
  /** Steps of the table's rows (records that made an update, thinned to at most `maxRows`). */
  steps: number[];
  /** Layer indices of the columns. */
  layers: number[];
  /** log10(‖ΔW‖/‖W‖) per row and layer; null where the ratio is 0 or not finite. */
  log10Ratio: (number | null)[][];
  /** ‖∇W_l‖ / ‖∇W_last‖ per row and layer (the last column is 1); null where undefined. */
  depthRatio: (number | null)[][];
  /** The healthy band drawn on the heat map and the far thresholds the verdicts use. */
  band: { center: number; low: number; high: number; farLow: number; farHigh: number };
  /** The window the verdicts are over: first and last step and the number of records. */
  window: { from: number; to: number; records: number } | null;
  /** The first window (record 0 included) of `earlyDepthRatio`. */
  earlyWindow: { from: number; to: number; records: number } | null;
  recent: LayerBalanceVerdict[];
}

/** Options of {@link layerBalance}. */
export interface LayerBalanceOptions {
  /** Records the verdicts take the median over (default `THRESHOLDS.balanceWindow`). */
  window?: number;
  /** Most table rows (default 200; power-of-two stride thinning, first and last kept). */
  maxRows?: number;
}

/** Median of finite values, or null when there are none. */
export function medianOf(values: readonly number[]): number | null {
  const v = values.filter(Number.isFinite).sort((a, b) => a - b);
  if (v.length === 0) return null;
  const m = v.length >> 1;
  return v.length % 2 ? v[m] : 0.5 * (v[m - 1] + v[m]);
}

const log10OrNull = (x: number): number | null => (x > 0 && Number.isFinite(x) ? Math.log10(x) : null);

/** Gradient norm of layer l over the last layer's, or NaN. */
function depthRatioOf(r: StepRecord, l: number): number {
  const last = r.layers[r.layers.length - 1];
  const g = r.layers[l]?.gradNorm;
  return last !== undefined && g !== undefined && last.gradNorm > 0 && Number.isFinite(last.gradNorm) ? g / last.gradNorm : NaN;
}

const span = (rs: readonly StepRecord[]): { from: number; to: number; records: number } | null =>
  rs.length === 0 ? null : { from: rs[0].step, to: rs[rs.length - 1].step, records: rs.length };

/** The layer-balance readout of a trajectory (see the module comment). */
export function layerBalance(trajectory: readonly StepRecord[], options: LayerBalanceOptions = {}): LayerBalance {
  const windowSize = options.window ?? THRESHOLDS.balanceWindow.value;
  const maxRows = options.maxRows ?? 200;
  const c = THRESHOLDS.updateRatioCenter.value;
  const d = Math.pow(10, THRESHOLDS.updateRatioBandDecades.value);
  const band = { center: c, low: c / d, high: c * d, farLow: THRESHOLDS.updateRatioLow.value, farHigh: THRESHOLDS.updateRatioHigh.value };
  const updates = trajectory.filter((r) => r.step > 0 && r.layers.length > 0);
  const layers = (updates[0] ?? trajectory[0])?.layers.map((l) => l.layer) ?? [];
  const keep = strideSelection(updates, maxRows, (i) => i === 0 || i === updates.length - 1);
  const shown = updates.filter((_, i) => keep(i));
  const recentRecords = updates.slice(Math.max(0, updates.length - windowSize));
  const earlyRecords = trajectory.filter((r) => r.layers.length > 0).slice(0, windowSize);
  const recent = layers.map((layer, l): LayerBalanceVerdict => {
    const medianRatio = medianOf(recentRecords.map((r) => r.layers[l].updateRatio).filter((x) => x > 0));
    let verdict: RatioVerdict = 'unknown';
    if (medianRatio !== null) verdict = medianRatio > band.farHigh ? 'high' : medianRatio < band.farLow ? 'low' : 'within';
    let firstOutside: number | null = null;
    if (verdict === 'high' || verdict === 'low') {
      const outside = (x: number): boolean => (verdict === 'high' ? x > band.farHigh : x > 0 && x < band.farLow);
      firstOutside = updates.find((r) => outside(r.layers[l].updateRatio))?.step ?? null;
    }
    return {
      layer, medianRatio, verdict, firstOutside,
      medianDepthRatio: medianOf(recentRecords.map((r) => depthRatioOf(r, l))),
      earlyDepthRatio: medianOf(earlyRecords.map((r) => depthRatioOf(r, l))),
    };
  });
  return {
    steps: shown.map((r) => r.step),
    layers,
    log10Ratio: shown.map((r) => r.layers.map((x) => log10OrNull(x.updateRatio))),
    depthRatio: shown.map((r) => r.layers.map((_, l) => {
      const x = depthRatioOf(r, l);
      return Number.isFinite(x) ? x : null;
    })),
    band,
    window: span(recentRecords),
    earlyWindow: span(earlyRecords),
    recent,
  };
}
