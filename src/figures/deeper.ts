/**
 * Figures of the deeper readouts as plain data (rendered by `ui/plot.ts` in the cell and by
 * `svg.ts` in reports): the loss along a line with its quadratic model and marks, the loss over a
 * plane as level lines with the trajectory on it, the range test on a log rate axis with the
 * suggested range and the stability limit, and batch sizes by examples seen. No numbers are
 * computed here beyond placing what core measured.
 */
import type { LineCurve } from '../core/probe/line';
import type { PlaneReadout } from '../core/probe/slice';
import type { RangeTestAtResult } from '../core/probe/readouts-at';
import type { BatchComparison } from '../core/probe/batch-compare';
import { chooseScale, themedAxis, themedLayout, type Figure, type FigureTheme, type LineSeries } from './trace';
import { contourLevels, levelLines } from './contour';

const fin = (v: number): number | null => (Number.isFinite(v) ? v : null);

/** A vertical mark from the lowest to the highest of `ys` at x. */
function vertical(name: string, x: number, ys: readonly number[], color: string, dash: 'dot' | 'dash'): LineSeries {
  const finite = ys.filter((v) => Number.isFinite(v));
  const lo = Math.min(...finite);
  const hi = Math.max(...finite);
  return { type: 'scatter', mode: 'lines', name, x: [x, x], y: [lo, hi], line: { color, width: 1.5, dash }, hovertemplate: `${name}: %{x:.4g}<extra></extra>` };
}

/** The loss along one line (update or eigenvector) with its quadratic model, the step taken and Brent's minimum. */
export function lineFigure(c: LineCurve, theme: FigureTheme, title: string): Figure {
  const xTitle = c.kind === 'update' ? 't (multiples of the step taken)' : 't (distance along the eigenvector)';
  const data: LineSeries[] = [
    { type: 'scatter', mode: 'lines', name: 'loss', x: c.t.slice(), y: c.loss.map(fin), line: { color: theme.train, width: 2 }, hovertemplate: 't %{x:.4g}: loss %{y:.6g}<extra></extra>' },
    { type: 'scatter', mode: 'lines', name: 'quadratic model', x: c.t.slice(), y: c.quadratic.map(fin), line: { color: theme.heldOut, width: 1.5, dash: 'dash' }, hovertemplate: 't %{x:.4g}: model %{y:.6g}<extra></extra>' },
    vertical('step taken', c.stepAt, [...c.loss, ...c.quadratic], theme.foreground, 'dot'),
  ];
  const lo = c.t[0];
  const hi = c.t[c.t.length - 1];
  const brent = c.minimum.t;
  let note = '';
  if (brent === null || c.minimum.loss === null || !Number.isFinite(brent)) note = ` — no minimum on this line (${c.minimum.note ?? 'none found'})`;
  else if (brent < lo || brent > hi) note = ` — Brent's minimum at t = ${brent.toPrecision(3)}, loss ${c.minimum.loss.toPrecision(4)}, off the plot`;
  else
    data.push({ type: 'scatter', mode: 'markers', name: "Brent's minimum", x: [brent], y: [c.minimum.loss], line: { color: theme.alert, width: 0 }, marker: { color: theme.alert, size: 9, symbol: 'diamond' }, hovertemplate: "Brent's minimum at t %{x:.4g}: %{y:.6g}<extra></extra>" });
  return {
    data,
    layout: { ...themedLayout(theme, { height: 240, xaxis: themedAxis(theme, xTitle), yaxis: themedAxis(theme, 'loss'), annotations: [], showlegend: true }), title: { text: `${title}${note}`, font: { size: 13 } } },
  };
}

/** Interpolates two #rrggbb colours (f = 0 gives a, 1 gives b). */
export function blend(a: string, b: string, f: number): string {
  const p = (h: string, k: number): number => parseInt(h.slice(1 + 2 * k, 3 + 2 * k), 16);
  const c = [0, 1, 2].map((k) => Math.round(p(a, k) + f * (p(b, k) - p(a, k))).toString(16).padStart(2, '0'));
  return `#${c.join('')}`;
}

/** The plane: level lines of the loss (low levels in the first series colour, high in the alert colour), the projected trajectory and the current point. */
export function planeFigure(r: PlaneReadout, theme: FigureTheme, levels = 12): Figure {
  const chosen = contourLevels(r.loss, levels);
  const lines = levelLines(r.alpha, r.beta, r.loss, chosen);
  const hex = (s: string): string => (/^#[0-9a-f]{6}$/i.test(s) ? s : '#1565c0');
  const data: LineSeries[] = lines.map((l, k) => ({
    type: 'scatter', mode: 'lines', name: `loss ${l.level.toPrecision(3)}`, x: l.x, y: l.y, showlegend: false,
    line: { color: blend(hex(theme.series[0]), hex(theme.alert), chosen.length > 1 ? k / (chosen.length - 1) : 0), width: 1 },
    hovertemplate: `loss ${l.level.toPrecision(4)}<extra></extra>`,
  }));
  data.push({ type: 'scatter', mode: 'lines+markers', name: 'trajectory (projected)', x: r.path.alpha.slice(), y: r.path.beta.slice(), line: { color: theme.foreground, width: 1.5 }, marker: { color: theme.foreground, size: 4 }, hovertemplate: 'α %{x:.3g}, β %{y:.3g}<extra></extra>' });
  data.push({ type: 'scatter', mode: 'markers', name: `step ${r.step}`, x: [0], y: [0], line: { color: theme.alert, width: 0 }, marker: { color: theme.alert, size: 9, symbol: 'x' }, hovertemplate: 'current weights<extra></extra>' });
  const what = r.kind === 'random' ? 'filter-normalized random direction' : 'eigenvector';
  return {
    data,
    layout: themedLayout(theme, { height: 320, xaxis: themedAxis(theme, `α (${what} 1)`), yaxis: themedAxis(theme, `β (${what} 2)`), annotations: [], showlegend: true }),
  };
}

/** The range test: loss against the learning rate (log axis), the suggested range and the stability limit. */
export function rangeFigure(r: RangeTestAtResult, theme: FigureTheme): Figure {
  const all = [r.startLoss, ...r.loss].filter((v) => Number.isFinite(v));
  const data: LineSeries[] = [
    { type: 'scatter', mode: 'lines+markers', name: 'loss after the update', x: r.lr.slice(), y: r.loss.map(fin), line: { color: theme.train, width: 2 }, marker: { color: theme.train, size: 4 }, hovertemplate: 'lr %{x:.3g}: loss %{y:.6g}<extra></extra>' },
  ];
  if (r.suggested !== null) {
    data.push(vertical('suggested low', r.suggested.low, all, theme.series[2] ?? theme.train, 'dash'));
    data.push(vertical('suggested high', r.suggested.high, all, theme.series[2] ?? theme.train, 'dash'));
  }
  const limit = r.limit?.largestStableLr;
  if (limit !== null && limit !== undefined && Number.isFinite(limit)) data.push(vertical(`stability limit ${r.limit?.formula ?? ''}`.trim(), limit, all, theme.alert, 'dot'));
  // A loss that blows up at the last rates would flatten the rest of the curve on a linear axis.
  const scale = chooseScale(all);
  const layout = themedLayout(theme, { height: 260, xaxis: themedAxis(theme, 'learning rate', 'log'), yaxis: themedAxis(theme, scale === 'log' ? 'loss (log scale)' : 'loss', scale), annotations: [], showlegend: true });
  if (r.beyondLimit) layout.title = { text: 'The suggested range reaches past the stability limit: one update per rate did not show the growth along the sharpest direction', font: { size: 12 } };
  return { data, layout };
}

/** Batch sizes compared by examples seen. */
export function batchFigure(c: BatchComparison, theme: FigureTheme): Figure {
  const data: LineSeries[] = c.runs.map((run, k) => {
    const color = theme.series[k % theme.series.length];
    return { type: 'scatter', mode: 'lines', name: `batch ${run.batch}${run.full ? ' (full)' : ''}`, x: run.examples.slice(), y: run.loss.map(fin), line: { color, width: 2 }, hovertemplate: `batch ${run.batch}: %{x} examples, loss %{y:.6g}<extra></extra>` };
  });
  const scale = chooseScale(c.runs.flatMap((run) => run.loss));
  return { data, layout: themedLayout(theme, { height: 260, xaxis: themedAxis(theme, 'examples seen'), yaxis: themedAxis(theme, scale === 'log' ? 'loss (log scale)' : 'loss', scale), annotations: [], showlegend: true }) };
}
