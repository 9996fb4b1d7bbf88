/**
 * The readout panel of the cell widget: the tab shown (trace, curvature, layers, data, audit,
 * compare), rebuilt only when what it shows changed, with its plotly figures. The loss trace is
 * redrawn at most about once a second while work runs (a plotly redraw costs tens of
 * milliseconds of main-thread time). A view over the controller's state; it never computes
 * numbers.
 */
import type { CellController } from './controller';
import { el, replaceChildren } from './dom';
import { comparePanel } from './compare-panel';
import { comparisonFigure, sharpnessOverlayFigure } from '../figures/compare';
import { readTheme, releaseFigure, renderFigure, resizeFigure } from './plot';
import { auditPanel, curvaturePanel, generalizationNote } from './readouts';
import { layersPanel } from './layers-panel';
import { dataPanel } from './data-panel';
import { curvatureFigure, sharpnessFigure } from './curvature-figure';
import { traceFigure, traceText, type FigureTheme } from '../figures/trace';
import type { CellViewState } from './view-state';
import { deeperFigures, deeperPanel, type DeeperPlots } from './deeper-panel';

/** Least milliseconds between trace redraws while work is running. */
const PLOT_INTERVAL_MS = 1000;

/** The panel below the readout tabs. */
export class ReadoutPanels {
  /** The panel's root (role tabpanel). */
  readonly node = el('div', 'sw-Panel');
  private readonly traceBox = el('div', 'sw-TraceBox');
  private readonly plotNode = el('div', 'sw-TracePlot');
  private readonly generalizationNode = el('div', 'sw-GeneralizationSlot');
  private readonly curvaturePlot = el('div', 'sw-CurvaturePlot');
  private readonly sharpnessPlot = el('div', 'sw-CurvaturePlot sw-SharpnessPlot');
  private readonly comparePlot = el('div', 'sw-ComparePlot');
  private readonly compareSharpnessPlot = el('div', 'sw-ComparePlot sw-CompareSharpnessPlot');
  private readonly deeperPlots: DeeperPlots = {
    lineUpdate: el('div', 'sw-DeeperPlot sw-DeeperLineUpdate'),
    lineEigen: el('div', 'sw-DeeperPlot sw-DeeperLineEigen'),
    plane: el('div', 'sw-DeeperPlot sw-DeeperPlane'),
    range: el('div', 'sw-DeeperPlot sw-DeeperRange'),
    batch: el('div', 'sw-DeeperPlot sw-DeeperBatch')
  };
  private rendered: string | null = null;
  private renderedGeneralization: string | null = null;
  private lastPlot = 0;
  private plotTimer: number | null = null;
  /** The trace figure last handed to plotly (JSON), to skip redrawing an unchanged one. */
  private drawnTrace: string | null = null;
  /** The theme read from the page, with the theme name it was read under. */
  private theme: { name: string; value: FigureTheme } | null = null;

  /** @param controller - whose state the panel shows and whose actions its buttons call. */
  constructor(private readonly controller: CellController, private readonly isAttached: () => boolean) {
    this.node.setAttribute('role', 'tabpanel');
    this.traceBox.append(this.plotNode, this.generalizationNode);
  }

  /** Forgets what was drawn, so the next render rebuilds (after a theme change). */
  invalidate(): void {
    this.rendered = null;
    this.drawnTrace = null;
    this.renderedGeneralization = null;
    this.theme = null;
  }

  /**
   * The figure theme, read from the page once per theme: reading CSS variables forces a style
   * recalculation of the page, which every state change (several per step) would otherwise pay.
   */
  private currentTheme(): FigureTheme {
    const body = document.body.dataset;
    const name = `${body.jpThemeName ?? ''}|${body.jpThemeLight ?? ''}`;
    if (this.theme === null || this.theme.name !== name) this.theme = { name, value: readTheme(this.node) };
    return this.theme.value;
  }

  /** Shows the state's tab. */
  render(s: CellViewState): void {
    if (s.tab === 'trace') {
      if (this.rendered !== 'trace') {
        replaceChildren(this.node, [this.traceBox]);
        this.drawnTrace = null;
      }
      this.rendered = 'trace';
      this.renderGeneralization(s);
      this.scheduleTrace(s.busy !== null);
      return;
    }
    const last = s.trajectory[s.trajectory.length - 1];
    const step = s.summary?.step ?? 0;
    const d = s.diagnosis;
    const key =
      `${s.tab}:${s.summary?.branch}:${step}:${last?.step}:${s.audit?.step}:${s.curvature?.step}:${s.curvature?.products}:${s.busy !== null}:` +
      `${s.sharpness.length}:${s.sharpness[s.sharpness.length - 1]?.step}:${s.stepN}:${d.derived.sharpness.sentence}:` +
      (s.tab === 'layers' ? `${d.activations.now?.step}:${d.derived.balance?.steps.length}:${d.derived.balance?.steps[d.derived.balance.steps.length - 1]}:${d.init !== null}` : '') +
      (s.tab === 'data' ? `${d.data !== null}:${d.noise?.step}:${d.noise?.noiseScale}` : '') +
      (s.tab === 'deeper' ? `${s.deeperChoice.kind}:${s.deeperChoice.directions}:${deeperKey(s)}` : '') +
      (s.tab === 'compare' ? `${s.comparison.axis}:${s.comparison.names.join('|')}:${s.comparison.data !== null}:${d.noise?.step}:${d.noise?.noiseScale}:${JSON.stringify(s.summary?.branches.map(b => b.name))}` : '');
    if (key === this.rendered) return;
    this.rendered = key;
    // The plot nodes are reused across panel rebuilds (plotly updates them in place); they are
    // released in dispose() only, since purging one with a redraw pending breaks plotly.
    const c = this.controller;
    const busy = s.busy !== null;
    const atCursor = s.trajectory.find(r => r.step === step) ?? last;
    let panel: HTMLElement;
    switch (s.tab) {
      case 'layers':
        panel = layersPanel(atCursor, d);
        break;
      case 'data':
        panel = dataPanel(d, () => void c.measureNoise(), busy, step);
        break;
      case 'audit':
        panel = auditPanel(s.audit, () => void c.audit(), busy, step);
        break;
      case 'curvature':
        panel = curvaturePanel(
          s.curvature,
          s.sharpness,
          { measure: () => void c.measureCurvature(), track: () => void c.trackSharpness(), trackSteps: c.defaultN },
          busy,
          { spectrum: this.curvaturePlot, history: this.sharpnessPlot },
          step,
          d.derived.sharpness
        );
        break;
      case 'deeper':
        panel = deeperPanel(s.deeperChoice, s.deeper, { branch: s.summary?.branch ?? '', step }, busy, {
          choose: patch => c.setDeeperChoice(patch),
          take: () => void c.takeDeeper()
        }, this.deeperPlots);
        break;
      case 'compare':
        panel = comparePanel(s.comparison, s.summary?.branches ?? [], busy, {
          choose: names => void c.setCompared(names),
          axis: axis => c.setCompareAxis(axis),
          refresh: () => void c.compare(),
          record: () => c.setForm('record'),
          measureNoise: () => void c.measureNoise(false)
        }, { loss: this.comparePlot, sharpness: this.compareSharpnessPlot }, { scale: d.noise, active: s.summary?.branch ?? '' });
        break;
    }
    replaceChildren(this.node, [panel]);
    if (!this.isAttached()) return;
    const theme = this.currentTheme();
    if (s.tab === 'curvature') {
      if (s.curvature !== null) void renderFigure(this.curvaturePlot, curvatureFigure(s.curvature, theme));
      if (s.sharpness.length > 0) void renderFigure(this.sharpnessPlot, sharpnessFigure(s.sharpness, theme));
    }
    if (s.tab === 'deeper') for (const [node, figure] of deeperFigures(s.deeperChoice.kind, s.deeper, this.deeperPlots, theme)) void renderFigure(node, figure);
    if (s.tab === 'compare' && s.comparison.data !== null) {
      const traces = s.comparison.data.traces;
      void renderFigure(this.comparePlot, comparisonFigure(traces, s.comparison.axis, theme));
      if (traces.some(t => t.sharpness.length > 0)) void renderFigure(this.compareSharpnessPlot, sharpnessOverlayFigure(traces, theme));
    }
  }

  private renderGeneralization(s: CellViewState): void {
    const g = s.diagnosis.derived.generalization;
    const key = g === null ? null : `${g.best.step}:${g.last.step}:${g.last.heldOut}`;
    if (key === this.renderedGeneralization) return;
    this.renderedGeneralization = key;
    const note = generalizationNote(g);
    replaceChildren(this.generalizationNode, note === null ? [] : [note]);
  }

  /** Draws the trace now, or within a second while work runs. */
  scheduleTrace(throttle: boolean): void {
    if (!this.isAttached()) return;
    const wait = throttle ? PLOT_INTERVAL_MS - (performance.now() - this.lastPlot) : 0;
    if (wait <= 0) return this.drawTrace();
    if (this.plotTimer === null) this.plotTimer = window.setTimeout(() => this.drawTrace(), wait);
  }

  /**
   * Draws the loss trace of the state (when its tab is shown), unless plotly already shows this
   * very figure.
   * @param force - draw even so (the plot node was just attached to the page).
   */
  drawTrace(force = false): void {
    if (this.plotTimer !== null) window.clearTimeout(this.plotTimer);
    this.plotTimer = null;
    this.lastPlot = performance.now();
    const s = this.controller.state;
    if (s.trajectory.length === 0 || s.tab !== 'trace' || !this.isAttached()) return;
    // While stepping, the records arriving are past the summary's step: no cursor to mark then.
    const cursor = s.busy === null ? s.summary?.step : undefined;
    this.plotNode.setAttribute('role', 'img');
    this.plotNode.setAttribute('aria-label', traceText(s.trajectory, cursor));
    // One action sets the state several times (busy, records, summary, ledger written); most of
    // those leave the figure as it is, and a plotly redraw costs more than the step itself.
    const figure = traceFigure(s.trajectory, this.currentTheme(), { cursor });
    const drawn = JSON.stringify(figure);
    if (drawn === this.drawnTrace && !force) return;
    this.drawnTrace = drawn;
    void renderFigure(this.plotNode, figure);
  }

  /** Re-lays out the displayed plots after a resize (hidden ones are laid out when shown). */
  resize(): void {
    for (const node of this.plots()) resizeFigure(node);
  }

  /** Frees the plots and the pending redraw. */
  dispose(): void {
    if (this.plotTimer !== null) window.clearTimeout(this.plotTimer);
    this.plotTimer = null;
    for (const node of this.plots()) releaseFigure(node);
  }

  private plots(): HTMLElement[] {
    return [this.plotNode, this.curvaturePlot, this.sharpnessPlot, this.comparePlot, this.compareSharpnessPlot, ...Object.values(this.deeperPlots)];
  }
}

/** Identities of the kept deeper results (each reply brings new objects: a result taken again redraws). */
const resultIds = new WeakMap<object, number>();
let nextResultId = 1;

/** What changes the Deeper tab's content: which results are kept, and which objects they are. */
function deeperKey(s: CellViewState): string {
  return Object.entries(s.deeper).map(([k, r]) => {
    let id = resultIds.get(r);
    if (id === undefined) resultIds.set(r, (id = nextResultId++));
    return `${k}@${r.step}#${id}`;
  }).join(',');
}
