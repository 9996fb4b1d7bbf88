/**
 * The comparison figures as plain data: the loss traces of several branches overlaid by step or
 * by examples drawn, and their sharpness traces against each branch's stability limit. Pure
 * functions of {@link BranchSeries}s (nothing recomputed), rendered by plotly in the cell, turned
 * into an image for the decision record and into SVG (`svg.ts`) for saved outputs and reports.
 * Each figure has a text alternative.
 */
import type { Figure, FigureNote, FigureTheme, LineSeries } from './trace';
import { chooseScale, decimate, logTicks, SHARPNESS_LOG_SPAN, stepAxis, themedAxis, themedLayout } from './trace';
import { fmt } from './format';

/** One sharpness measurement as the figures draw it (the worker's `SharpnessPoint` has this shape). */
export interface SharpnessSample {
  step: number;
  /** The sharpness the recipe's rule uses (λmax, or of the preconditioned matrix). */
  sharpness: number;
  /** The largest sharpness the learning rate in effect tolerates, or null when no rule applies. */
  limit: number | null;
  /** True when `sharpness` is of a preconditioned matrix. */
  preconditioned: boolean;
}

/**
 * What the comparison figures draw of one branch: the worker's `BranchTrace` in the cell, a
 * ledger's decoded branch in the command line's report (nothing here recomputes a number).
 */
export interface BranchSeries {
  name: string;
  parent: string | null;
  forkStep: number | null;
  /** The branch's patch as `KEY=VALUE, …` (empty for the root). */
  patchText: string;
  restart: boolean;
  /** Steps of the drawn records, increasing. */
  steps: number[];
  /** Examples drawn up to each of `steps` (null without data rows). */
  examples: number[] | null;
  /** Training loss at each of `steps`. */
  loss: number[];
  sharpness: SharpnessSample[];
}

/** What the loss overlay puts on its x axis. */
export type CompareAxis = 'step' | 'examples';

/** The colour of the i-th branch: the theme's series colours in turn. */
export function seriesColour(theme: FigureTheme, i: number): string {
  const palette = theme.series.length > 0 ? theme.series : [theme.train];
  return palette[i % palette.length];
}

/**
 * The part of a trace a figure draws: from the fork step on when its parent is drawn too (their
 * shared steps are drawn once, by the parent), else all of it.
 */
export function drawnFrom(trace: BranchSeries, drawn: readonly BranchSeries[]): number {
  if (trace.parent === null || trace.forkStep === null || trace.restart) return 0;
  return drawn.some((t) => t.name === trace.parent) ? trace.forkStep : 0;
}

/** A branch's legend label: its name and, for a fork, what it changed. */
export function branchLabel(t: BranchSeries): string {
  return t.parent === null ? t.name : `${t.name} (${t.patchText} from ${t.parent}@${t.forkStep})`;
}

/** Options of {@link comparisonFigure}. */
export interface ComparisonOptions {
  height?: number;
  /** Width in pixels (only for images; the cell's figure follows its container). */
  width?: number;
  /** Title above the plot (images carry one, the cell does not need it). */
  title?: string;
}

/**
 * The training-loss traces of `traces` overlaid: by step, or by examples drawn (when every trace
 * has examples). A diamond marks each fork point; a note marks where a loss stops being finite.
 */
export function comparisonFigure(traces: readonly BranchSeries[], axis: CompareAxis, theme: FigureTheme, options: ComparisonOptions = {}): Figure {
  const byExamples = axis === 'examples' && traces.every((t) => t.examples !== null);
  const data: LineSeries[] = [];
  const annotations: FigureNote[] = [];
  const values: number[] = [];
  traces.forEach((t, i) => {
    const colour = seriesColour(theme, i);
    const from = drawnFrom(t, traces);
    const idx = t.steps.map((s, k) => (s >= from ? k : -1)).filter((k) => k >= 0);
    const xs = idx.map((k) => (byExamples ? (t.examples as number[])[k] : t.steps[k]));
    const ys = idx.map((k) => (Number.isFinite(t.loss[k]) ? t.loss[k] : null));
    for (const y of ys) if (y !== null) values.push(y);
    const line = decimate(xs, ys);
    data.push({
      type: 'scatter',
      mode: line.x.length < 30 ? 'lines+markers' : 'lines',
      name: branchLabel(t),
      x: line.x,
      y: line.y,
      line: { color: colour, width: 2, dash: i === 0 ? 'solid' : i % 2 === 1 ? 'dash' : 'dot' },
      marker: { color: colour, size: 4 },
      hovertemplate: `${t.name}<br>${byExamples ? 'examples %{x}' : 'step %{x}'}<br>training loss %{y:.6g}<extra></extra>`
    });
    if (from > 0 && idx.length > 0) {
      const k = idx[0];
      data.push({
        type: 'scatter',
        mode: 'markers',
        name: `${t.name} forks`,
        x: [byExamples ? (t.examples as number[])[k] : t.steps[k]],
        y: [Number.isFinite(t.loss[k]) ? t.loss[k] : null],
        line: { color: colour, width: 0 },
        marker: { color: colour, size: 10, symbol: 'diamond' },
        hovertemplate: `${t.name} forks from ${t.parent} at step ${t.forkStep}<extra></extra>`,
        showlegend: false
      });
    }
    const bad = idx.find((k) => !Number.isFinite(t.loss[k]));
    if (bad !== undefined) {
      annotations.push({ x: byExamples ? (t.examples as number[])[bad] : t.steps[bad], y: 1, xref: 'x', yref: 'paper', text: `${t.name}: loss not finite`, showarrow: false, font: { color: colour, size: 11 }, yanchor: 'top' });
    }
  });
  const scale = chooseScale(values);
  const maxX = Math.max(0, ...data.flatMap((d) => d.x));
  return {
    data,
    layout: {
      ...themedLayout(theme, {
        height: options.height ?? 300,
        xaxis: byExamples ? { ...themedAxis(theme, 'examples drawn'), rangemode: 'tozero' } : stepAxis(theme, maxX),
        yaxis: themedAxis(theme, scale === 'log' ? 'training loss (log scale)' : 'training loss', scale),
        annotations,
        showlegend: true
      }),
      ...(options.width !== undefined ? { width: options.width } : {}),
      ...(options.title !== undefined ? { title: { text: options.title, font: { size: 14 } } } : {})
    }
  };
}

/** The sharpness of each branch over its steps, each with its stability limit (same colour, dashed). */
export function sharpnessOverlayFigure(traces: readonly BranchSeries[], theme: FigureTheme): Figure {
  const data: LineSeries[] = [];
  const values: number[] = [];
  traces.forEach((t, i) => {
    if (t.sharpness.length === 0) return;
    const colour = seriesColour(theme, i);
    const pre = t.sharpness.some((p) => p.preconditioned);
    data.push({
      type: 'scatter',
      mode: t.sharpness.length < 30 ? 'lines+markers' : 'lines',
      name: `${t.name}: ${pre ? 'preconditioned sharpness' : 'λmax'}`,
      x: t.sharpness.map((p) => p.step),
      y: t.sharpness.map((p) => (Number.isFinite(p.sharpness) ? p.sharpness : null)),
      line: { color: colour, width: 2 },
      marker: { color: colour, size: 5 },
      hovertemplate: `${t.name}<br>step %{x}<br>sharpness %{y:.6g}<extra></extra>`
    });
    const limited = t.sharpness.filter((p) => p.limit !== null);
    if (limited.length > 0) {
      data.push({
        type: 'scatter',
        mode: 'lines',
        name: `${t.name}: limit`,
        x: limited.map((p) => p.step),
        y: limited.map((p) => p.limit),
        line: { color: colour, width: 1.5, dash: 'dash' },
        hovertemplate: `${t.name}<br>step %{x}<br>limit %{y:.6g}<extra></extra>`
      });
    }
    for (const p of t.sharpness) if (Number.isFinite(p.sharpness)) values.push(p.sharpness);
    for (const p of limited) values.push(p.limit as number);
  });
  const maxX = Math.max(0, ...data.flatMap((d) => d.x));
  const scale = chooseScale(values, SHARPNESS_LOG_SPAN);
  return {
    data,
    layout: themedLayout(theme, {
      height: 240,
      xaxis: stepAxis(theme, maxX),
      yaxis: { ...themedAxis(theme, scale === 'log' ? 'sharpness (log scale)' : 'sharpness', scale), ...logTicks(values, scale) },
      annotations: [],
      showlegend: true
    })
  };
}

/**
 * The text alternative of the loss overlay: one sentence per branch with where its drawn trace
 * ends (numbers as the worker sent them).
 */
export function comparisonText(traces: readonly BranchSeries[], axis: CompareAxis): string {
  const byExamples = axis === 'examples' && traces.every((t) => t.examples !== null);
  const parts = traces.map((t) => {
    const n = t.steps.length;
    if (n === 0) return `${t.name} has no steps`;
    const last = n - 1;
    const firstBad = t.loss.findIndex((v) => !Number.isFinite(v));
    const at = byExamples ? `${fmt((t.examples as number[])[last])} examples (step ${t.steps[last]})` : `step ${t.steps[last]}`;
    const where = t.parent === null ? '' : ` (forked from ${t.parent} at step ${t.forkStep} with ${t.patchText})`;
    return firstBad >= 0
      ? `${t.name}${where}: loss not finite from step ${t.steps[firstBad]}`
      : `${t.name}${where}: training loss ${fmt(t.loss[last])} at ${at}`;
  });
  return `Training loss of ${traces.length} branch${traces.length === 1 ? '' : 'es'} by ${byExamples ? 'examples drawn' : 'step'}. ${parts.join('; ')}.`;
}
