/**
 * The curvature figure as plain data: the measured extreme Hessian eigenvalues as stems and
 * the recipe's stability limit on λ as a horizontal line (for plain gradient descent 2/η:
 * eigen-directions above it grow instead of shrink). Pure; rendered by `plot.ts`.
 */
import type { CurvatureResult, SharpnessPoint } from '../worker/protocol';
import type { Figure, FigureNote, FigureTheme, LineSeries } from '../figures/trace';
import { chooseScale, logTicks, SHARPNESS_LOG_SPAN, stepAxis, themedAxis, themedLayout } from '../figures/trace';

/**
 * Builds the spectrum-ends figure.
 *
 * @param c - a curvature measurement.
 * @param theme - colours from the page.
 */
export function curvatureFigure(c: CurvatureResult, theme: FigureTheme): Figure {
  const top = c.top.map((v, i) => ({ rank: i + 1, v, above: c.aboveTop[i] === true }));
  const bottom = c.bottom.map((v, i) => ({ rank: -(i + 1), v, above: c.aboveBottom[i] === true }));
  const points = [...bottom.reverse(), ...top];
  const limit = c.limitLine;
  const stems: LineSeries = {
    type: 'scatter',
    mode: 'markers',
    name: 'eigenvalues',
    x: points.map(p => p.rank),
    y: points.map(p => p.v),
    line: { color: theme.train, width: 0 },
    marker: { color: theme.train, size: 9 },
    hovertemplate: 'λ = %{y:.6g}<extra></extra>'
  };
  const data: LineSeries[] = [stems];
  const unstable = points.filter(p => p.above);
  if (unstable.length > 0) {
    data.push({
      type: 'scatter',
      mode: 'markers',
      name: 'above the stability limit',
      x: unstable.map(p => p.rank),
      y: unstable.map(p => p.v),
      line: { color: theme.alert, width: 0 },
      marker: { color: theme.alert, size: 11, symbol: 'diamond' },
      hovertemplate: 'λ = %{y:.6g} (unstable)<extra></extra>'
    });
  }
  const annotations: FigureNote[] = [];
  if (limit !== null) {
    const xs = points.map(p => p.rank);
    const lo = Math.min(...xs, 0) - 0.5;
    const hi = Math.max(...xs, 0) + 0.5;
    data.push({
      type: 'scatter',
      mode: 'lines',
      name: `stability limit ${limitFormula(c.summary.stability.formula)}`,
      x: [lo, hi],
      y: [limit, limit],
      line: { color: theme.heldOut, width: 2, dash: 'dash' },
      hovertemplate: `limit λ = %{y:.6g}<extra></extra>`
    });
  }
  return {
    data,
    layout: themedLayout(theme, {
      height: 260,
      xaxis: themedAxis(theme, 'rank (1 = largest, −1 = smallest)', 'linear', theme.foreground),
      yaxis: themedAxis(theme, 'Hessian eigenvalue λ', 'linear', theme.foreground),
      annotations,
      showlegend: true
    })
  };
}

/**
 * The formula of the limit line on λ: the largest stable η's formula (`2/λmax`, `2(1+μ)/λmax`)
 * solved for λ instead (`λ = 2/η`, `λ = 2(1+μ)/η`).
 */
export function limitFormula(etaFormula: string): string {
  return `λ = ${etaFormula.replace('λmax', 'η')}`;
}

/**
 * The sharpness over the steps against the limit of the learning rate in effect: the signature
 * of a step size that is too large is the sharpness line crossing the limit line.
 *
 * @param points - measurements in step order.
 * @param theme - colours from the page.
 */
export function sharpnessFigure(points: readonly SharpnessPoint[], theme: FigureTheme): Figure {
  const pre = points.some(p => p.preconditioned);
  const data: LineSeries[] = [
    {
      type: 'scatter',
      mode: points.length < 30 ? 'lines+markers' : 'lines',
      name: pre ? 'sharpness (preconditioned)' : 'λmax',
      x: points.map(p => p.step),
      y: points.map(p => (Number.isFinite(p.sharpness) ? p.sharpness : null)),
      line: { color: theme.train, width: 2 },
      marker: { color: theme.train, size: 5 },
      hovertemplate: 'step %{x}<br>sharpness %{y:.6g}<extra></extra>'
    }
  ];
  const limited = points.filter(p => p.limit !== null);
  if (limited.length > 0) {
    data.push({
      type: 'scatter',
      mode: 'lines',
      name: 'stability limit',
      x: limited.map(p => p.step),
      y: limited.map(p => p.limit),
      line: { color: theme.heldOut, width: 2, dash: 'dash' },
      hovertemplate: 'step %{x}<br>limit %{y:.6g}<extra></extra>'
    });
    const over = limited.filter(p => p.above);
    if (over.length > 0) {
      data.push({
        type: 'scatter',
        mode: 'markers',
        name: 'above the limit',
        x: over.map(p => p.step),
        y: over.map(p => p.sharpness),
        line: { color: theme.alert, width: 0 },
        marker: { color: theme.alert, size: 8, symbol: 'diamond' },
        hovertemplate: 'step %{x}<br>sharpness %{y:.6g} (unstable)<extra></extra>'
      });
    }
  }
  const values = [...points.map(p => p.sharpness), ...limited.map(p => p.limit as number)];
  const scale = chooseScale(values, SHARPNESS_LOG_SPAN);
  return {
    data,
    layout: themedLayout(theme, {
      height: 240,
      xaxis: stepAxis(theme, points.length > 0 ? points[points.length - 1].step : 0),
      yaxis: { ...themedAxis(theme, `${pre ? 'sharpness of the preconditioned Hessian' : 'λmax'}${scale === 'log' ? ' (log scale)' : ''}`, scale), ...logTicks(values, scale) },
      annotations: [],
      showlegend: true
    })
  };
}
