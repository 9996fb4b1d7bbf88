/**
 * The thin plotly wrapper: renders a figure description (built by a pure function such as
 * `traceFigure`) into a node, with theme colours read from JupyterLab's CSS variables.
 */
import Plotly from 'plotly.js-basic-dist-min';
import type { Data, Layout } from 'plotly.js';
import type { Figure, FigureTheme } from '../figures/trace';

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
    font: v('--jp-ui-font-family', 'sans-serif'),
    series: [
      v('--jp-brand-color1', '#1976d2'),
      v('--jp-warn-color1', '#f57c00'),
      v('--jp-success-color1', '#388e3c'),
      v('--jp-accent-color1', '#7b1fa2'),
      v('--jp-error-color1', '#d32f2f'),
      v('--jp-brand-color3', '#90caf9')
    ]
  };
}

/** Renders (or updates in place) a figure in `node`. A failed draw is reported, never thrown. */
export async function renderFigure(node: HTMLElement, figure: Figure): Promise<void> {
  try {
    await Plotly.react(
      node,
      figure.data as unknown as Data[],
      figure.layout as unknown as Partial<Layout>,
      // Not `responsive`: plotly's own window-resize handler throws for plots in hidden tabs or
      // removed nodes; the widget resizes displayed plots itself (see resizeFigure).
      { displaylogo: false, modeBarButtonsToRemove: ['select2d', 'lasso2d'] }
    );
  } catch (error) {
    console.warn(`Stepwell: a plot could not be drawn (${String(error)})`);
  }
}

/** Releases plotly's resources on `node`. */
export function releaseFigure(node: HTMLElement): void {
  Plotly.purge(node);
}

/** True when `node` holds a drawn plot that is in the page and displayed (plotly can only lay out those). */
export function isDisplayedPlot(node: HTMLElement): boolean {
  return node.isConnected && node.offsetParent !== null && node.classList.contains('js-plotly-plot');
}

/** Re-lays out a drawn, displayed figure after its container changed size; does nothing otherwise. */
export function resizeFigure(node: HTMLElement): void {
  if (!isDisplayedPlot(node)) return;
  // plotly returns a promise here (its typings say void); a failed relayout is not worth an error.
  const done = Plotly.Plots.resize(node) as unknown as Promise<void> | undefined;
  done?.catch(() => undefined);
}

/** An image of a figure for a notebook attachment: base64 PNG without the data-URL prefix. */
export interface FigureImage {
  mime: 'image/png';
  /** Base64 of the PNG bytes. */
  data: string;
}

/**
 * Draws `figure` off-screen with plotly and returns it as a PNG (2× scale for sharp text), or
 * null when plotly cannot draw here (the caller writes the record without the image).
 */
export async function figureImage(figure: Figure, width = 720, height = 320): Promise<FigureImage | null> {
  try {
    const url = await Plotly.toImage(
      { data: figure.data as unknown as Data[], layout: { ...(figure.layout as unknown as Partial<Layout>), width, height } },
      { format: 'png', width, height, scale: 2 }
    );
    const comma = url.indexOf(',');
    return comma < 0 ? null : { mime: 'image/png', data: url.slice(comma + 1) };
  } catch (error) {
    console.warn(`Stepwell: the comparison figure could not be turned into an image (${String(error)})`);
    return null;
  }
}
