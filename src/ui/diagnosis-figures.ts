/**
 * Figure descriptions of the diagnosis readouts, as plain data (tested in Node): the small
 * pre-activation histograms of the Layers tab (drawn as inline SVG) and the step × layer heat map
 * of log10(‖ΔW‖/‖W‖) (drawn as an HTML table with coloured cells, so it needs no heat-map plot
 * type and a screen reader can walk it). The numbers and the band come from the worker.
 */
import type { PreactivationHistogram } from '../core/probe/activation-health';
import type { LayerBalance } from '../core/probe/balance';

/** One bar of a small histogram, in the SVG's own units (0…width × 0…height, y down). */
export interface Bar {
  x: number;
  y: number;
  width: number;
  height: number;
  /** e.g. `[-0.5, 0): 12 of 480` */
  label: string;
}

/** A small histogram: its bars, the marks of the saturation threshold, and its text alternative. */
export interface HistogramFigure {
  width: number;
  height: number;
  bars: Bar[];
  /** x positions of ±threshold (tanh 2, sigmoid 4), when the activation saturates and the threshold lies on the axis. */
  marks: number[];
  text: string;
}

const range = (lo: number, hi: number): string => `[${lo}, ${hi})`;

/**
 * The histogram of a layer's pre-activations: the 24 bins of width 0.5 on [−6, 6), plus one bar
 * on each side for the entries beyond (drawn apart), heights scaled to the tallest bar.
 *
 * @param threshold - |a| beyond which the activation counts as saturated, or null.
 */
export function histogramFigure(h: PreactivationHistogram, threshold: number | null, width = 156, height = 40): HistogramFigure {
  const counts = [h.below, ...h.counts, h.above];
  const labels = [`below ${h.edges[0]}`, ...h.counts.map((_, k) => range(h.edges[k], h.edges[k + 1])), `at or above ${h.edges[h.edges.length - 1]}`];
  const total = counts.reduce((a, b) => a + b, 0) + h.nonFinite;
  const top = Math.max(1, ...counts);
  const slot = width / (counts.length + 2); // a gap of one slot on either side of the [−6, 6) bins
  const xOf = (i: number): number => (i === 0 ? 0 : i === counts.length - 1 ? width - slot : (i + 1) * slot);
  const bars = counts.map((c, i): Bar => {
    const bh = c === 0 ? 0 : Math.max(1, (c / top) * height);
    return { x: xOf(i), y: height - bh, width: slot * 0.9, height: bh, label: `${labels[i]}: ${c} of ${total}` };
  });
  const lo = h.edges[0];
  const hi = h.edges[h.edges.length - 1];
  const axis = (a: number): number => 2 * slot + ((a - lo) / (hi - lo)) * (width - 4 * slot);
  const marks = threshold !== null && threshold < hi ? [axis(-threshold), axis(threshold)] : [];
  // The text alternative says where most of the mass is.
  let k = 0;
  for (let i = 1; i < counts.length; i++) if (counts[i] > counts[k]) k = i;
  const text = total === 0 ? 'No pre-activations.' :
    `Histogram of ${total} pre-activations on [${lo}, ${hi}) in bins of ${h.edges[1] - h.edges[0]}; most in ${labels[k]} (${counts[k]}); ${h.below} below, ${h.above} above${h.nonFinite > 0 ? `, ${h.nonFinite} not finite` : ''}.`;
  return { width, height, bars, marks, text };
}

/** Where a cell's ratio lies against the band of common practice (the band and far thresholds come from core). */
export type HeatZone = 'far-low' | 'low' | 'band' | 'high' | 'far-high' | 'none';

/** One cell of the heat map. */
export interface HeatCell {
  step: number;
  /** log10(‖ΔW‖/‖W‖), or null where the ratio is 0 or not finite. */
  value: number | null;
  zone: HeatZone;
  label: string;
}

/** The heat map: rows are layers, columns steps. */
export interface HeatMap {
  steps: number[];
  rows: { layer: number; cells: HeatCell[] }[];
  /** Zones in order with their meaning, for the legend. */
  legend: { zone: HeatZone; label: string }[];
  /** Text alternative: the layers' recent medians and where they lie. */
  text: string;
}

const sci = (x: number): string => x.toExponential(0);

/** The zone of one log10 ratio against the balance's band (center ± half-width) and far thresholds. */
export function heatZone(log10Ratio: number | null, band: LayerBalance['band']): HeatZone {
  if (log10Ratio === null) return 'none';
  // Compared in decades, where the cell's value lives (10^-4 is not exactly 1e-4 in floating point).
  const at = (edge: number): number => Math.log10(edge);
  if (log10Ratio > at(band.farHigh)) return 'far-high';
  if (log10Ratio > at(band.high)) return 'high';
  if (log10Ratio >= at(band.low)) return 'band';
  if (log10Ratio >= at(band.farLow)) return 'low';
  return 'far-low';
}

/** Builds the heat map of a layer balance. */
export function balanceHeatMap(b: LayerBalance): HeatMap {
  const band = b.band;
  const rows = b.layers.map((layer, l) => ({
    layer,
    cells: b.steps.map((step, i): HeatCell => {
      const v = b.log10Ratio[i]?.[l] ?? null;
      return { step, value: v, zone: heatZone(v, band), label: v === null ? `step ${step}, layer ${layer}: no update` : `step ${step}, layer ${layer}: log10 ratio ${v.toFixed(2)} (ratio ${Math.pow(10, v).toExponential(1)})` };
    })
  }));
  const legend: HeatMap['legend'] = [
    { zone: 'far-low', label: `below ${sci(band.farLow)}` },
    { zone: 'low', label: `${sci(band.farLow)}–${sci(band.low)}` },
    { zone: 'band', label: `${sci(band.low)}–${sci(band.high)} (band around ${sci(band.center)})` },
    { zone: 'high', label: `${sci(band.high)}–${sci(band.farHigh)}` },
    { zone: 'far-high', label: `above ${sci(band.farHigh)}` },
    { zone: 'none', label: 'no update (step 0, ratio 0 or not finite)' }
  ];
  const recent = b.recent.map(r => `layer ${r.layer} ${r.medianRatio === null ? 'no ratio' : r.medianRatio.toExponential(1)} (${r.verdict})`).join('; ');
  const text = b.steps.length === 0 ? 'No updates yet.'
    : `log10(‖ΔW‖/‖W‖) for ${b.layers.length} layers at ${b.steps.length} steps from ${b.steps[0]} to ${b.steps[b.steps.length - 1]}. Median over the last ${b.window?.records ?? 0} updates: ${recent}.`;
  return { steps: b.steps.slice(), rows, legend, text };
}
