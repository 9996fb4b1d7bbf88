/**
 * The loss-trace figure as plain data: a pure function of the trajectory and the theme
 * colours, rendered by the thin plotly wrapper in `ui/plot.ts` in the cell and by `svg.ts` for
 * saved outputs and the command line's reports. No DOM, no plotly import, so figures are tested
 * in Node and the command line can draw them.
 */
import type { StepRecord } from '../core/state';

/** Colours and font read from the page's theme (JupyterLab CSS variables). */
export interface FigureTheme {
  /** Text and axis lines. */
  foreground: string;
  /** Grid lines. */
  grid: string;
  /** Plot and paper background. */
  background: string;
  /** Training-loss line. */
  train: string;
  /** Held-out loss line. */
  heldOut: string;
  /** Markers of notable events (divergence). */
  alert: string;
  /** CSS font family. */
  font: string;
  /** Colours of branches in comparisons, in order. */
  series: string[];
}

/** A fixed light theme for figures saved as images (a decision record reads the same in any viewer). */
export const IMAGE_THEME: Readonly<FigureTheme> = {
  foreground: '#212121',
  grid: '#e0e0e0',
  background: '#ffffff',
  train: '#1565c0',
  heldOut: '#ef6c00',
  alert: '#c62828',
  font: 'Helvetica, Arial, sans-serif',
  series: ['#1565c0', '#ef6c00', '#2e7d32', '#6a1b9a', '#c62828', '#00838f']
};

/** One line series in plotly's data shape. */
export interface LineSeries {
  type: 'scatter';
  mode: 'lines' | 'lines+markers' | 'markers';
  name: string;
  x: number[];
  /** `null` leaves a gap (non-finite values). */
  y: (number | null)[];
  line: { color: string; width: number; dash?: 'solid' | 'dot' | 'dash' };
  marker?: { color: string; size: number; symbol?: string };
  hovertemplate: string;
  /** False keeps a helper series (fork markers) out of the legend. */
  showlegend?: boolean;
}

/** A text note anchored in data coordinates. */
export interface FigureNote {
  x: number;
  y: number;
  xref: 'x';
  yref: 'paper';
  text: string;
  showarrow: boolean;
  font: { color: string; size: number };
  yanchor: 'top';
}

/** Axis settings used here. */
export interface AxisLayout {
  title: { text: string };
  type: 'linear' | 'log';
  gridcolor: string;
  zerolinecolor: string;
  color: string;
  rangemode?: 'tozero' | 'normal';
  automargin: boolean;
  /** How tick labels write powers of ten (`power`: 10⁻⁶, never SI prefixes such as µ). */
  exponentformat: 'power' | 'e' | 'none';
  /** Tick placement: `linear` with `dtick` for whole-step ticks. */
  tickmode?: 'auto' | 'linear';
  tick0?: number;
  dtick?: number;
  /**
   * `allow`: tick labels are never hidden for reaching past the plot. plotly's default for
   * numeric axes re-measures every label once per label drawn (quadratic in the tick count, a
   * third of a trace redraw's time); `automargin` already keeps the labels inside the figure.
   */
  ticklabeloverflow: 'allow';
}

/** The figure description handed to plotly. */
export interface Figure {
  data: LineSeries[];
  layout: {
    height: number;
    margin: { l: number; r: number; t: number; b: number };
    paper_bgcolor: string;
    plot_bgcolor: string;
    font: { family: string; color: string; size: number };
    xaxis: AxisLayout;
    yaxis: AxisLayout;
    legend: { orientation: 'h'; x: number; y: number; xanchor: 'left' | 'right'; yanchor: 'bottom' };
    annotations: FigureNote[];
    showlegend: boolean;
    /** Pixel width (images only; in the cell the figure follows its container). */
    width?: number;
    /** `y` (container fraction) and `yanchor` place the title above the legend when both are shown. */
    title?: { text: string; font: { size: number }; y?: number; yanchor?: 'top' };
  };
}

/**
 * A step axis with whole-number ticks: a spacing of 1, 2 or 5 × 10^k giving at most about 8
 * ticks over 0…maxStep (plotly's automatic ticks put fractional steps on short traces).
 */
export function stepAxis(theme: FigureTheme, maxStep: number): AxisLayout {
  const target = Math.max(1, maxStep) / 8;
  const decade = Math.pow(10, Math.floor(Math.log10(target)));
  const dtick = Math.max(1, [1, 2, 5, 10].map((m) => m * decade).find((d) => d >= target) ?? 10 * decade);
  return { ...themedAxis(theme, 'step'), rangemode: 'tozero', tickmode: 'linear', tick0: 0, dtick };
}

/** A themed axis: grid, zero line and tick colours from the JupyterLab theme, powers of ten as 10⁻⁶. */
export function themedAxis(theme: FigureTheme, title: string, type: 'linear' | 'log' = 'linear', zeroline: string = theme.grid): AxisLayout {
  return { title: { text: title }, type, gridcolor: theme.grid, zerolinecolor: zeroline, color: theme.foreground, automargin: true, exponentformat: 'power', ticklabeloverflow: 'allow' };
}

/** The layout every Stepwell figure shares (theme colours, margins, legend top right); callers give the parts that differ. */
export function themedLayout(
  theme: FigureTheme,
  parts: Pick<Figure['layout'], 'height' | 'xaxis' | 'yaxis' | 'annotations' | 'showlegend'>
): Figure['layout'] {
  return {
    margin: { l: 56, r: 16, t: 32, b: 40 },
    paper_bgcolor: theme.background,
    plot_bgcolor: theme.background,
    font: { family: theme.font, color: theme.foreground, size: 12 },
    // Top left, clear of plotly's toolbar at the top right.
    legend: { orientation: 'h', x: 0, y: 1.02, xanchor: 'left', yanchor: 'bottom' },
    ...parts
  };
}

/** Options of {@link traceFigure}. */
export interface TraceOptions {
  /** Pixel height. Default 260. */
  height?: number;
  /** Force a scale; default `auto` (log when all finite losses are positive and span > 2 decades). */
  scale?: 'auto' | 'linear' | 'log';
  /** The branch's current step when later steps are kept after it: those are drawn dotted. */
  cursor?: number;
}

const finite = (v: number | undefined): v is number => v !== undefined && Number.isFinite(v);

/** Most points drawn per series; longer traces are reduced by {@link decimate}. */
export const MAX_PLOT_POINTS = 1000;

/**
 * Reduces a series to at most about `maxPoints` points for drawing, keeping each bucket's
 * lowest and highest value (so spikes and divergences stay visible), the first and the last
 * point, and a gap (null) wherever a bucket holds a non-finite value.
 */
export function decimate(x: readonly number[], y: readonly (number | null)[], maxPoints = MAX_PLOT_POINTS): { x: number[]; y: (number | null)[] } {
  const n = x.length;
  if (n <= maxPoints) return { x: x.slice(), y: y.slice() };
  const size = Math.ceil(n / Math.max(1, Math.floor((maxPoints - 2) / 2)));
  const ox: number[] = [x[0]];
  const oy: (number | null)[] = [y[0]];
  for (let start = 1; start < n - 1; start += size) {
    const end = Math.min(n - 1, start + size);
    let lo = -1;
    let hi = -1;
    let gap = -1;
    for (let i = start; i < end; i++) {
      const v = y[i];
      if (v === null) {
        if (gap < 0) gap = i;
        continue;
      }
      if (lo < 0 || v < (y[lo] as number)) lo = i;
      if (hi < 0 || v > (y[hi] as number)) hi = i;
    }
    const picks = [lo, hi, gap].filter(i => i >= 0).sort((a, b) => a - b);
    for (const i of picks.filter((v, k) => picks.indexOf(v) === k)) {
      ox.push(x[i]);
      oy.push(y[i]);
    }
  }
  ox.push(x[n - 1]);
  oy.push(y[n - 1]);
  return { x: ox, y: oy };
}

/** The max/min ratio above which sharpness plots turn logarithmic (see {@link chooseScale}). */
export const SHARPNESS_LOG_SPAN = 10;

/**
 * Ticks for a log axis that spans few decades, where plotly's own labels shrink to bare digits
 * ("3" for 30): doublings (1, 2, 4, 8, 16, 32) written in full up to 2.5 decades, one tick per
 * decade beyond. Returns no fields for a linear axis.
 */
export function logTicks(values: readonly number[], scale: 'linear' | 'log'): Partial<Pick<AxisLayout, 'tickmode' | 'tick0' | 'dtick' | 'exponentformat'>> {
  if (scale === 'linear') return {};
  const finite = values.filter(v => Number.isFinite(v) && v > 0);
  if (finite.length === 0) return {};
  const decades = Math.log10(Math.max(...finite) / Math.min(...finite));
  return decades <= 2.5 ? { tickmode: 'linear', tick0: 0, dtick: Math.log10(2), exponentformat: 'none' } : { tickmode: 'linear', tick0: 0, dtick: 1 };
}

/**
 * Chooses the y scale: log when every finite value is positive and max/min exceeds `span`.
 *
 * @param span - the max/min ratio above which the scale turns logarithmic; default 100 (losses).
 *   Sharpness plots pass 10, so a limit near 2 stays apart from a λmax that later grows to 30.
 */
export function chooseScale(values: readonly number[], span = 100): 'linear' | 'log' {
  let lo = Infinity;
  let hi = -Infinity;
  for (const v of values) {
    if (!Number.isFinite(v)) continue;
    if (v <= 0) return 'linear';
    lo = Math.min(lo, v);
    hi = Math.max(hi, v);
  }
  return lo < Infinity && hi / lo > span ? 'log' : 'linear';
}

/**
 * Builds the loss trace: training loss per step, held-out loss where the setup has a
 * split, and a note at the first step whose loss is not finite.
 *
 * @param trajectory - step records in step order (record 0 first).
 * @param theme - colours from the page.
 * @returns the plotly figure description.
 */
export function traceFigure(trajectory: readonly StepRecord[], theme: FigureTheme, options: TraceOptions = {}): Figure {
  const cursor = options.cursor;
  const split = cursor !== undefined && trajectory.length > 0 && trajectory[trajectory.length - 1].step > cursor;
  const shown = split ? trajectory.filter(r => r.step <= (cursor as number)) : trajectory;
  const train = decimate(
    shown.map(r => r.step),
    shown.map(r => (Number.isFinite(r.loss) ? r.loss : null))
  );
  const kept: LineSeries[] = [];
  if (split) {
    const later = trajectory.filter(r => r.step >= (cursor as number));
    const k = decimate(later.map(r => r.step), later.map(r => (Number.isFinite(r.loss) ? r.loss : null)));
    kept.push({
      type: 'scatter',
      mode: 'lines',
      name: `kept steps after ${cursor}`,
      x: k.x,
      y: k.y,
      line: { color: theme.train, width: 1.5, dash: 'dot' },
      hovertemplate: 'step %{x} (kept)<br>training loss %{y:.6g}<extra></extra>'
    });
  }
  const data: LineSeries[] = [
    {
      type: 'scatter',
      mode: trajectory.length < 30 ? 'lines+markers' : 'lines',
      name: 'training loss',
      x: train.x,
      y: train.y,
      line: { color: theme.train, width: 2 },
      marker: { color: theme.train, size: 4 },
      hovertemplate: 'step %{x}<br>training loss %{y:.6g}<extra></extra>'
    },
    ...kept
  ];
  // The held-out loss of kept steps after the cursor is left out, like their training loss's solid line.
  const held = shown.filter(r => r.heldOutLoss !== undefined);
  if (held.length > 0) {
    const h = decimate(
      held.map(r => r.step),
      held.map(r => (finite(r.heldOutLoss) ? r.heldOutLoss : null))
    );
    data.push({
      type: 'scatter',
      mode: held.length < 30 ? 'lines+markers' : 'lines',
      name: 'held-out loss',
      x: h.x,
      y: h.y,
      line: { color: theme.heldOut, width: 2, dash: 'dash' },
      marker: { color: theme.heldOut, size: 4 },
      hovertemplate: 'step %{x}<br>held-out loss %{y:.6g}<extra></extra>'
    });
  }
  const annotations: FigureNote[] = [];
  const blowUp = trajectory.find(r => !Number.isFinite(r.loss));
  if (blowUp !== undefined) {
    annotations.push({
      x: blowUp.step,
      y: 1,
      xref: 'x',
      yref: 'paper',
      text: `loss not finite at step ${blowUp.step}`,
      showarrow: false,
      font: { color: theme.alert, size: 12 },
      yanchor: 'top'
    });
  }
  const values = [...trajectory.map(r => r.loss), ...held.map(r => r.heldOutLoss as number)];
  const scale = options.scale === undefined || options.scale === 'auto' ? chooseScale(values) : options.scale;
  return {
    data,
    layout: themedLayout(theme, {
      height: options.height ?? 260,
      xaxis: stepAxis(theme, trajectory.length > 0 ? trajectory[trajectory.length - 1].step : 0),
      yaxis: themedAxis(theme, scale === 'log' ? 'loss (log scale)' : 'loss', scale),
      annotations,
      showlegend: held.length > 0 || split
    })
  };
}

/** The text alternative of the loss trace: where it starts, where the branch is, and where the loss stops being finite. */
export function traceText(trajectory: readonly StepRecord[], cursor?: number): string {
  if (trajectory.length === 0) return 'No steps yet.';
  const first = trajectory[0];
  const last = trajectory[trajectory.length - 1];
  const at = trajectory.find(r => r.step === cursor) ?? last;
  const bad = trajectory.find(r => !Number.isFinite(r.loss));
  const kept = at.step < last.step ? ` Steps ${at.step + 1}–${last.step} are kept after it.` : '';
  return `Training loss per step: ${fmtLoss(first.loss)} at step ${first.step}, ${fmtLoss(at.loss)} at step ${at.step}.${kept}` +
    (bad !== undefined ? ` The loss is not finite from step ${bad.step}.` : '');
}

/** A loss with 4 significant digits for the text alternative. */
function fmtLoss(v: number): string {
  return Number.isFinite(v) ? String(Number(v.toPrecision(4))) : String(v);
}
