/**
 * The live widget of a stepwell cell: controls, status line, problems, progress with Stop,
 * readout tabs and the proxy-model note. A view over a {@link CellController}: it renders
 * the controller's state and forwards clicks; it never computes numbers.
 */
import { Widget } from '@lumino/widgets';
import type { CellController } from './controller';
import { button, el, replaceChildren, show } from './dom';
import { runUntilForm, rewindForm, readNumber } from './forms';
import { readTheme, releaseFigure, renderFigure, resizeFigure } from './plot';
import { auditPanel, curvaturePanel, layersPanel } from './readouts';
import { curvatureFigure, sharpnessFigure } from './curvature-figure';
import { problemLine, PROXY_NOTE, statusLine } from './summary';
import { traceFigure } from './trace-figure';
import type { CellViewState, ReadoutTab } from './view-state';

/** CSS classes of the cell widget. */
export namespace CellWidgetClass {
  export const root = 'sw-CellWidget';
  export const status = 'sw-Status';
  export const problems = 'sw-Problems';
  export const notice = 'sw-Notice';
  export const controls = 'sw-Controls';
  export const progress = 'sw-Progress';
  export const tabs = 'sw-Tabs';
  export const plot = 'sw-TracePlot';
}

const TABS: [ReadoutTab, string][] = [
  ['trace', 'Trace'],
  ['curvature', 'Curvature'],
  ['layers', 'Layers'],
  ['audit', 'Audit']
];

/**
 * Least milliseconds between plot redraws while work is running. A plotly redraw costs tens
 * of milliseconds of main-thread time; the status line and progress bar update on every
 * progress message, the plot about once a second.
 */
const PLOT_INTERVAL_MS = 1000;

/** The widget shown in a stepwell cell's output area. */
export class StepwellCellWidget extends Widget {
  private readonly controller: CellController;
  private readonly statusNode = el('div', CellWidgetClass.status);
  private readonly problemsNode = el('ul', CellWidgetClass.problems);
  private readonly noticeNode = el('div', CellWidgetClass.notice);
  private readonly controlsNode = el('div', CellWidgetClass.controls);
  private readonly formNode = el('div', 'sw-FormSlot');
  private readonly progressNode = el('div', CellWidgetClass.progress);
  private readonly progressBar = el('progress', 'sw-ProgressBar');
  private readonly progressText = el('span', 'sw-ProgressText');
  private readonly tabsNode = el('div', CellWidgetClass.tabs);
  private readonly panelNode = el('div', 'sw-Panel');
  private readonly plotNode = el('div', CellWidgetClass.plot);
  private readonly curvaturePlot = el('div', 'sw-CurvaturePlot');
  private readonly sharpnessPlot = el('div', 'sw-CurvaturePlot sw-SharpnessPlot');
  private readonly nInput = el('input', 'sw-Input sw-StepN');
  private readonly buttons: Record<string, HTMLButtonElement> = {};
  private lastPlot = 0;
  private plotTimer: number | null = null;
  private renderedPanel: string | null = null;
  private renderedForm: string | null = null;
  private themeObserver: MutationObserver | null = null;

  /** @param options - the controller whose state this widget shows. */
  constructor(options: StepwellCellWidget.Options) {
    super();
    this.controller = options.controller;
    this.addClass(CellWidgetClass.root);
    this.build();
    this.controller.changed.connect(this.onState, this);
    this.render(this.controller.state);
  }

  private build(): void {
    const c = this.controller;
    const head = el('div', 'sw-Head');
    head.append(el('span', 'sw-Title', 'Stepwell'), this.statusNode);
    this.problemsNode.setAttribute('role', 'alert');
    this.noticeNode.setAttribute('role', 'status');
    this.nInput.setAttribute('aria-label', 'steps per Step ×N');
    this.nInput.value = '';
    this.nInput.placeholder = String(c.defaultN);
    this.nInput.addEventListener('input', () => this.labelStepN());
    const add = (key: string, label: string, title: string, onClick: () => void): void => {
      this.buttons[key] = button(label, title, onClick, `sw-Button-${key}`);
    };
    add('step', 'Step', 'Apply one optimizer update', () => void c.step(1));
    add('stepN', 'Step ×N', 'Apply N optimizer updates (N from the box, default from settings)', () => {
      const text = this.nInput.value;
      if (text.trim() === '') return void c.step();
      const n = readNumber(text, 'N', true, 1);
      if (typeof n === 'string') c.say('error', `Step ×N: ${n}.`);
      else void c.step(n);
    });
    add('until', 'Run until…', 'Step until a condition holds', () => c.setForm(c.state.form === 'run-until' ? null : 'run-until'));
    add('rewind', 'Rewind…', 'Go back to a checkpoint or an earlier step', () => c.setForm(c.state.form === 'rewind' ? null : 'rewind'));
    add('reset', 'Reset', 'Start again at step 0 from the spec text', () => void c.reset());
    add('verify', 'Verify', 'Replay from the seed and compare bit for bit', () => void c.verify());
    add('start', 'Start over', 'Replace the unreadable ledger with a new session from the spec', () => void c.run(true));
    this.labelStepN();
    this.controlsNode.append(
      this.buttons.step, this.buttons.stepN, this.nInput, this.buttons.until, this.buttons.rewind,
      this.buttons.reset, this.buttons.verify, this.buttons.start
    );
    this.progressNode.append(this.progressText, this.progressBar,
      button('Stop', 'End the running work after the current update', () => c.stop(), 'sw-Button-stop'));
    for (const [tab, label] of TABS) {
      const b = button(label, `Show the ${label.toLowerCase()} readout`, () => c.setTab(tab), 'sw-Tab');
      b.dataset.tab = tab;
      b.setAttribute('role', 'tab');
      this.tabsNode.appendChild(b);
    }
    this.tabsNode.setAttribute('role', 'tablist');
    this.node.append(head, this.problemsNode, this.noticeNode, this.controlsNode, this.formNode, this.progressNode,
      this.tabsNode, this.panelNode, el('p', 'sw-ProxyNote', PROXY_NOTE));
  }

  private onState(_: CellController, state: CellViewState): void {
    this.render(state);
  }

  private render(s: CellViewState): void {
    const last = s.trajectory[s.trajectory.length - 1];
    this.statusNode.textContent =
      s.summary === null
        ? s.ledger === 'corrupt' ? 'unreadable ledger' : 'no session yet: run the cell (Shift+Enter)'
        : `${statusLine({ step: last?.step ?? s.summary.step, last, msPerStep: s.msPerStep, ledgerBytes: s.ledgerBytes })}` +
          ` · ${s.summary.recipe}`;
    replaceChildren(this.problemsNode, s.problems.map(p => el('li', 'sw-Problem', problemLine(p))));
    show(this.problemsNode, s.problems.length > 0);
    const notice = s.specEdited
      ? { level: 'warn', text: 'Spec edited: run the cell (Shift+Enter) or Reset to start a session from the new text.' }
      : s.notice;
    this.noticeNode.textContent = notice?.text ?? '';
    this.noticeNode.dataset.level = notice?.level ?? '';
    show(this.noticeNode, notice !== null);
    const busy = s.busy !== null;
    const hasSession = s.summary !== null;
    for (const key of ['step', 'stepN', 'until', 'rewind', 'verify']) this.buttons[key].disabled = busy || !hasSession || s.specEdited;
    this.buttons.reset.disabled = busy || s.problems.length > 0;
    show(this.buttons.start, s.ledger === 'corrupt');
    this.buttons.reset.hidden = s.ledger === 'corrupt';
    show(this.progressNode, busy);
    if (s.busy !== null) {
      this.progressBar.max = Math.max(1, s.busy.total);
      if (s.busy.total > 0) this.progressBar.value = s.busy.done;
      else this.progressBar.removeAttribute('value');
      this.progressText.textContent = s.busy.total > 0 ? `${s.busy.action}: ${s.busy.done} / ${s.busy.total}` : `${s.busy.action}…`;
    }
    this.renderForm(s);
    for (const b of Array.from(this.tabsNode.children) as HTMLElement[]) {
      b.setAttribute('aria-selected', String(b.dataset.tab === s.tab));
    }
    this.renderPanel(s);
  }

  private renderForm(s: CellViewState): void {
    const key = s.form === null ? null : `${s.form}:${s.summary?.step}`;
    if (key === this.renderedForm) return;
    this.renderedForm = key;
    const c = this.controller;
    const close = (): void => c.setForm(null);
    if (s.form === 'run-until') replaceChildren(this.formNode, [runUntilForm(s.runUntil, (k, m) => void c.runUntil(k, m), close)]);
    else if (s.form === 'rewind' && s.summary !== null)
      replaceChildren(this.formNode, [rewindForm(s.summary.checkpointSteps, s.summary.step, step => void c.rewind(step), close)]);
    else replaceChildren(this.formNode, []);
  }

  private renderPanel(s: CellViewState): void {
    if (s.tab === 'trace') {
      if (this.renderedPanel !== 'trace') replaceChildren(this.panelNode, [this.plotNode]);
      this.renderedPanel = 'trace';
      this.schedulePlot(s.busy !== null);
      return;
    }
    const last = s.trajectory[s.trajectory.length - 1];
    const key =
      `${s.tab}:${last?.step}:${s.audit?.step}:${s.curvature?.step}:${s.curvature?.products}:${s.busy !== null}:` +
      `${s.sharpness.length}:${s.sharpness[s.sharpness.length - 1]?.step}`;
    if (key === this.renderedPanel) return;
    this.renderedPanel = key;
    // The plot nodes are reused across panel rebuilds (plotly updates them in place); they are
    // released in dispose() only, since purging one with a redraw pending breaks plotly.
    let panel: HTMLElement;
    switch (s.tab) {
      case 'layers':
        panel = layersPanel(last);
        break;
      case 'audit':
        panel = auditPanel(s.audit, () => void this.controller.audit(), s.busy !== null);
        break;
      case 'curvature':
        panel = curvaturePanel(
          s.curvature,
          s.sharpness,
          { measure: () => void this.controller.measureCurvature(), track: () => void this.controller.trackSharpness(this.stepsFromBox()), trackSteps: this.stepsFromBox() },
          s.busy !== null,
          { spectrum: this.curvaturePlot, history: this.sharpnessPlot }
        );
        break;
    }
    replaceChildren(this.panelNode, [panel]);
    if (s.tab === 'curvature' && this.isAttached) {
      const theme = readTheme(this.node);
      if (s.curvature !== null) void renderFigure(this.curvaturePlot, curvatureFigure(s.curvature, theme));
      if (s.sharpness.length > 0) void renderFigure(this.sharpnessPlot, sharpnessFigure(s.sharpness, theme));
    }
  }

  /** Shows the N that Step ×N will use on its button. */
  private labelStepN(): void {
    this.buttons.stepN.textContent = `Step ×${this.stepsFromBox()}`;
  }

  /** N of the Step ×N box, or the default when it is empty or invalid. */
  private stepsFromBox(): number {
    const n = readNumber(this.nInput.value, 'N', true, 1);
    return typeof n === 'number' ? n : this.controller.defaultN;
  }

  private schedulePlot(throttle: boolean): void {
    if (!this.isAttached) return;
    const wait = throttle ? PLOT_INTERVAL_MS - (performance.now() - this.lastPlot) : 0;
    if (wait <= 0) return this.drawPlot();
    if (this.plotTimer === null) this.plotTimer = window.setTimeout(() => this.drawPlot(), wait);
  }

  private drawPlot(): void {
    if (this.plotTimer !== null) window.clearTimeout(this.plotTimer);
    this.plotTimer = null;
    this.lastPlot = performance.now();
    const s = this.controller.state;
    if (s.trajectory.length === 0 || s.tab !== 'trace' || this.isDisposed) return;
    void renderFigure(this.plotNode, traceFigure(s.trajectory, readTheme(this.node)));
  }

  /** Draws the plot once the node is in the page, and follows theme changes. */
  protected onAfterAttach(): void {
    this.themeObserver = new MutationObserver(() => {
      this.renderedPanel = null;
      this.render(this.controller.state);
      this.drawPlot();
    });
    this.themeObserver.observe(document.body, { attributes: true, attributeFilter: ['data-jp-theme-name', 'data-jp-theme-light'] });
    this.drawPlot();
  }

  /** Stops following theme changes. */
  protected onBeforeDetach(): void {
    this.themeObserver?.disconnect();
    this.themeObserver = null;
  }

  /** Re-lays out the plot after a resize. */
  protected onResize(): void {
    resizeFigure(this.plotNode);
  }

  /** Disconnects from the controller and frees the plot. Idempotent. */
  dispose(): void {
    if (this.isDisposed) return;
    this.controller.changed.disconnect(this.onState, this);
    if (this.plotTimer !== null) window.clearTimeout(this.plotTimer);
    releaseFigure(this.plotNode);
    releaseFigure(this.curvaturePlot);
    releaseFigure(this.sharpnessPlot);
    super.dispose();
  }
}

/** Options of {@link StepwellCellWidget}. */
export namespace StepwellCellWidget {
  /** Construction options. */
  export interface Options {
    controller: CellController;
  }
}
