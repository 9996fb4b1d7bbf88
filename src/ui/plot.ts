/**
 * The thin plotly wrapper: renders a figure description (built by a pure function such as
 * `traceFigure`) into a node, with theme colours read from JupyterLab's CSS variables.
 */
import Plotly from 'plotly.js-basic-dist-min';
import type { Data, Layout } from 'plotly.js';
import type { Figure, FigureTheme } from './trace-figure';

/** Reads the figure theme from the CSS variables in effect at `node`. */
export function readTheme(node: HTMLElement): FigureTheme {
  const css = getComputedStyle(node);
  const v = (name: string, fallback: string): string => css.getPropertyValue(name).trim() || fallback;
  return {
    foreground: v('--jp-ui-font-color1', '#333'),
    grid: v('--jp-border-color2', '#ddd'),
    background: v('--jp-layout-color1', '#fff'),
    train: v('--jp-brand-color1', '#1976d2'),
    heldOut: v('--jp-warn-color1', '#f57c00'),
    alert: v('--jp-error-color1', '#d32f2f'),
    font: v('--jp-ui-font-family', 'sans-serif')
  };
}

/** Renders (or updates in place) a figure in `node`. A failed draw is reported, never thrown. */
export async function renderFigure(node: HTMLElement, figure: Figure): Promise<void> {
  try {
    await Plotly.react(
      node,
      figure.data as unknown as Data[],
      figure.layout as unknown as Partial<Layout>,
      { displaylogo: false, responsive: true, modeBarButtonsToRemove: ['select2d', 'lasso2d'] }
    );
  } catch (error) {
    console.warn(`Stepwell: a plot could not be drawn (${String(error)})`);
  }
}

/** Releases plotly's resources on `node`. */
export function releaseFigure(node: HTMLElement): void {
  Plotly.purge(node);
}

/** Re-lays out a figure after its container changed size. */
export function resizeFigure(node: HTMLElement): void {
  if (node.childElementCount > 0) void Plotly.Plots.resize(node);
}
