/**
 * The live widget of a stepwell cell: status line, problems, notice and confirmation, the branch
 * bar, controls, inline forms, progress with Stop, the findings strip, readout tabs with their
 * panel ({@link ReadoutPanels}) and the proxy-model note. A view over a {@link CellController}:
 * it renders the controller's state and forwards clicks; it never computes numbers.
 */
import { Widget } from '@lumino/widgets';
import type { CellController } from './controller';
import { button, el, replaceChildren, show } from './dom';
import { chipSteps, readNumber, rewindForm, runUntilForm } from './forms';
import { branchForm, confirmBar, recordForm, renameForm } from './branch-forms';
import { branchBar, lockBranchBar } from './branch-bar';
import { problemLine, PROXY_NOTE, statusLine } from './summary';
import { rovingFocus } from './keyboard';
import { findingsStrip } from './findings-strip';
import { ReadoutPanels } from './panel-view';
import type { CellViewState } from './view-state';
import { READOUT_TABS } from './view-state';

/** CSS classes of the cell widget. */
export namespace CellWidgetClass {
  export const root = 'sw-CellWidget';
  export const status = 'sw-Status';
  export const problems = 'sw-Problems';
  export const notice = 'sw-Notice';
  export const controls = 'sw-Controls';
  export const progress = 'sw-Progress';
  export const tabs = 'sw-Tabs';
  export const findings = 'sw-FindingsSlot';
}

/** Milliseconds a single update (Step Once) runs before its progress row is shown. */
const SINGLE_UPDATE_GRACE_MS = 250;

/** The widget shown in a stepwell cell's output area. */
export class StepwellCellWidget extends Widget {
  private readonly controller: CellController;
  private readonly statusNode = el('div', CellWidgetClass.status);
  private readonly problemsNode = el('ul', CellWidgetClass.problems);
  private readonly noticeNode = el('div', CellWidgetClass.notice);
  private readonly confirmNode = el('div', 'sw-ConfirmSlot');
  private readonly branchNode = el('div', 'sw-BranchSlot');
  private readonly controlsNode = el('div', CellWidgetClass.controls);
  private readonly formNode = el('div', 'sw-FormSlot');
  private readonly progressNode = el('div', CellWidgetClass.progress);
  private readonly progressBar = el('progress', 'sw-ProgressBar');
  private readonly progressText = el('span', 'sw-ProgressText');
  private readonly tabsNode = el('div', CellWidgetClass.tabs);
  private readonly findingsNode = el('div', CellWidgetClass.findings);
  private readonly panels: ReadoutPanels;
  private readonly nInput = el('input', 'sw-Input sw-StepN');
  private readonly buttons: Record<string, HTMLButtonElement> = {};
  private readonly tabButtons: HTMLButtonElement[] = [];
  private setBranchProblems: ((p: CellViewState['branchProblems']) => void) | null = null;
  private renderedFindings: string | null = null;
  /** Whether the folded findings are shown (kept across rebuilds of the strip). */
  private findingsMore = false;
  private renderedForm: string | null = null;
  private renderedBar: string | null = null;
  private renderedConfirm: string | null = null;
  private themeObserver: MutationObserver | null = null;
  /** Pending display of the progress row of a single update (see showProgress). */
  private progressTimer: number | null = null;

  /** @param options - the controller whose state this widget shows. */
  constructor(options: StepwellCellWidget.Options) {
    super();
    this.controller = options.controller;
    this.panels = new ReadoutPanels(this.controller, () => this.isAttached);
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
    this.nInput.value = c.state.stepN;
    this.nInput.placeholder = String(c.settings.defaultN);
    this.nInput.addEventListener('input', () => c.setStepN(this.nInput.value));
    const add = (key: string, label: string, title: string, onClick: () => void): void => {
      this.buttons[key] = button(label, title, onClick, `sw-Button-${key}`);
    };
    add('step', 'Step', 'Apply one optimizer update', () => void c.step(1));
    add('stepN', 'Step ×N', 'Apply N optimizer updates (N from the box, default from settings)', () => {
      const text = this.nInput.value;
      const n = text.trim() === '' ? c.defaultN : readNumber(text, 'N', true, 1);
      if (typeof n === 'string') c.say('error', `Step ×N: ${n}.`);
      else void c.step(n);
    });
    add('until', 'Run until…', 'Step until a condition holds', () => c.setForm(c.state.form === 'run-until' ? null : 'run-until'));
    add('rewind', 'Go to step…', 'Go back (or forward) to a checkpoint or any recorded step; later steps are kept', () => c.setForm(c.state.form === 'rewind' ? null : 'rewind'));
    add('reset', 'Reset…', 'Start again at step 0 from the spec text (asks before discarding steps or branches)', () => void c.reset());
    add('verify', 'Verify', 'Replay every branch from the seed and compare bit for bit', () => void c.verify());
    add('start', 'Start over…', 'Replace the unreadable ledger with a new session from the spec (asks first, and can keep a copy)', () => void c.reset());
    this.controlsNode.append(
      this.buttons.step, this.buttons.stepN, this.nInput, this.buttons.until, this.buttons.rewind,
      this.buttons.reset, this.buttons.verify, this.buttons.start
    );
    this.progressNode.append(this.progressText, this.progressBar,
      button('Stop', 'End the running work after the current update', () => c.stop(), 'sw-Button-stop'));
    READOUT_TABS.forEach(([tab, label]) => {
      const b = button(label, `Show the ${label.toLowerCase()} readout`, () => c.setTab(tab), 'sw-Tab');
      b.dataset.tab = tab;
      b.setAttribute('role', 'tab');
      this.tabButtons.push(b);
      this.tabsNode.appendChild(b);
    });
    this.tabsNode.setAttribute('role', 'tablist');
    this.tabsNode.setAttribute('aria-label', 'Readouts (arrow keys switch)');
    this.node.append(head, this.problemsNode, this.noticeNode, this.confirmNode, this.branchNode, this.controlsNode, this.formNode,
      this.progressNode, this.findingsNode, this.tabsNode, this.panels.node, el('p', 'sw-ProxyNote', PROXY_NOTE));
  }

  private onState(_: CellController, state: CellViewState): void {
    this.render(state);
  }

  private render(s: CellViewState): void {
    // The readout panel first: plotly measures the page while it draws, which forces a layout of
    // everything changed before it; drawn first, it finds the page as the last frame left it,
    // and the lines below are laid out once, in the next frame.
    this.panels.render(s);
    const step = shownStep(s);
    const atCursor = s.summary === null ? undefined : s.trajectory.find(r => r.step === step);
    const many = (s.summary?.branches.length ?? 0) > 1;
    this.statusNode.textContent =
      s.summary === null
        ? s.ledger === 'corrupt' ? 'unreadable ledger' : s.ledger === 'reading' ? 'reading the saved ledger…' : 'no session yet: run the cell (Shift+Enter)'
        : `${statusLine({ step, tip: s.summary.tip, last: atCursor, msPerStep: s.msPerStep, msBelow: s.msBelow, ledgerBytes: s.ledgerBytes })}` +
          `${many ? ` · branch ${s.summary.branch}` : ''} · ${s.summary.recipe}` +
          (s.specEdited ? ' · previous spec' : '');
    replaceChildren(this.problemsNode, s.problems.map(p => el('li', 'sw-Problem', problemLine(p))));
    show(this.problemsNode, s.problems.length > 0);
    const notice = s.specEdited && s.notice === null
      ? {
          level: 'warn',
          text: s.problems.length > 0
            ? 'The spec is edited and has problems (listed above): fix them, then run the cell (Shift+Enter) to start from the new text. The readouts still show the session of the previous text.'
            : 'Spec edited: run the cell (Shift+Enter) to start a new session from it (you are asked before steps are discarded), or undo the edit to go on.'
        }
      : s.notice;
    this.noticeNode.textContent = notice?.text ?? '';
    this.noticeNode.dataset.level = notice?.level ?? '';
    show(this.noticeNode, notice !== null);
    this.renderConfirm(s);
    const busy = s.busy !== null;
    const hasSession = s.summary !== null;
    for (const key of ['step', 'stepN', 'until', 'rewind', 'verify']) this.buttons[key].disabled = busy || !hasSession || s.specEdited;
    this.buttons.reset.disabled = busy || (s.problems.length > 0 && s.filesBlocked !== true);
    show(this.buttons.start, s.ledger === 'corrupt');
    this.buttons.reset.hidden = s.ledger === 'corrupt';
    this.buttons.stepN.textContent = `Step ×${this.controller.defaultN}`;
    if (this.nInput.value !== s.stepN) this.nInput.value = s.stepN;
    this.showProgress(s);
    if (s.busy !== null) {
      this.progressBar.max = Math.max(1, s.busy.total);
      if (s.busy.total > 0) this.progressBar.value = s.busy.done;
      else this.progressBar.removeAttribute('value');
      this.progressText.textContent = s.busy.total > 0 ? `${s.busy.action}: ${s.busy.done} / ${s.busy.total}` : `${s.busy.action}…`;
    }
    this.renderBranchBar(s);
    this.renderForm(s);
    this.setBranchProblems?.(s.branchProblems);
    const selected = READOUT_TABS.findIndex(([t]) => t === s.tab);
    this.tabButtons.forEach((b, i) => b.setAttribute('aria-selected', String(i === selected)));
    rovingFocus(this.tabsNode, this.tabButtons, selected, i => this.controller.setTab(READOUT_TABS[i][0]));
    this.renderFindings(s);
  }

  /**
   * Shows the progress row (with Stop) while work runs. A single update (Step Once) shows it only
   * when still running after {@link SINGLE_UPDATE_GRACE_MS}: Stop cannot shorten it, and a row
   * that appears and vanishes again within one step re-lays out the whole notebook twice.
   */
  private showProgress(s: CellViewState): void {
    const single = s.busy !== null && s.busy.total === 1;
    if (s.busy === null || !single) {
      if (this.progressTimer !== null) window.clearTimeout(this.progressTimer);
      this.progressTimer = null;
      show(this.progressNode, s.busy !== null);
      return;
    }
    if (this.progressTimer !== null || !this.progressNode.hidden) return;
    this.progressTimer = window.setTimeout(() => {
      this.progressTimer = null;
      if (this.controller.state.busy !== null) show(this.progressNode, true);
    }, SINGLE_UPDATE_GRACE_MS);
  }

  /** The findings strip, rebuilt only when the findings (or whether work runs) changed. */
  private renderFindings(s: CellViewState): void {
    const d = s.diagnosis;
    // A single update (Step Once) is over before a refresh could happen: no note for it.
    const stepping = s.busy !== null && s.busy.total > 1;
    const locked = s.busy !== null || s.specEdited;
    // Whether work runs only disables the buttons: done in place, not by rebuilding the strip
    // (twice per Step Once otherwise).
    const key = JSON.stringify([s.summary?.branch, d.findings.map(f => [f.id, f.layer, f.statement, f.proposal]), d.derived.tried, stepping, s.specEdited]);
    if (key === this.renderedFindings) {
      for (const b of this.findingsNode.querySelectorAll<HTMLButtonElement>('.sw-Button-try')) b.disabled = locked;
      return;
    }
    this.renderedFindings = key;
    const strip = findingsStrip(d.findings, d.derived.tried, locked, {
      tryFinding: i => void this.controller.tryFinding(i),
      toggleMore: open => {
        this.findingsMore = open;
      }
    }, stepping ? 'refreshed about once a second while it steps' : null, this.findingsMore);
    replaceChildren(this.findingsNode, [strip]);
    show(this.findingsNode, d.findings.length > 0);
  }

  private renderConfirm(s: CellViewState): void {
    const key = s.confirm === null ? null : `${s.confirm.kind}:${s.confirm.text}`;
    if (key === this.renderedConfirm) return;
    this.renderedConfirm = key;
    const c = this.controller;
    if (s.confirm === null) return replaceChildren(this.confirmNode, []);
    const bar = confirmBar(s.confirm, () => void c.confirm(), () => c.cancelConfirm(), () => void c.replaceUnreadable(true));
    replaceChildren(this.confirmNode, [bar]);
    bar.querySelector<HTMLButtonElement>('.sw-Button-keep')?.focus();
  }

  private renderBranchBar(s: CellViewState): void {
    const branches = s.summary?.branches ?? [];
    // Work starting or ending only locks the buttons (in place); the items ask at each click.
    const key = JSON.stringify([branches, s.summary?.branch, s.specEdited]);
    if (key === this.renderedBar) return lockBranchBar(this.branchNode, s.busy !== null);
    this.renderedBar = key;
    if (s.summary === null) return replaceChildren(this.branchNode, []);
    const c = this.controller;
    replaceChildren(this.branchNode, [branchBar(branches, s.summary.branch, () => c.state.busy !== null, {
      switchTo: name => void c.switchBranch(name),
      newBranch: () => c.setForm(c.state.form === 'branch' ? null : 'branch'),
      rename: () => c.setForm(c.state.form === 'rename' ? null : 'rename'),
      remove: name => void c.deleteBranch(name),
      discard: () => void c.discardLater(),
      compare: () => c.setTab('compare')
    }, s.specEdited)]);
  }

  private renderForm(s: CellViewState): void {
    const key = s.form === null || s.summary === null ? null : `${s.form}:${s.summary.branch}:${s.summary.step}:${s.summary.tip}`;
    if (key === this.renderedForm) return;
    this.renderedForm = key;
    this.setBranchProblems = null;
    const c = this.controller;
    const close = (): void => c.setForm(null);
    const sum = s.summary;
    if (s.form === null || sum === null) return replaceChildren(this.formNode, []);
    const chips = chipSteps(sum.checkpointSteps, sum.step, sum.tip, c.settings.checkpointCap);
    switch (s.form) {
      case 'run-until':
        return replaceChildren(this.formNode, [runUntilForm(s.runUntil, (k, m) => void c.runUntil(k, m), close)]);
      case 'rewind':
        return replaceChildren(this.formNode, [rewindForm(chips, sum.step, sum.tip, step => void c.rewind(step), close)]);
      case 'branch': {
        const info = sum.branches.find(b => b.name === sum.branch);
        const form = branchForm({
          from: sum.branch, step: sum.step, tip: sum.tip, first: info?.forkStep ?? 0, checkpoints: chips,
          onInput: text => c.checkBranchForm(text),
          onSubmit: (text, step, name) => void c.submitBranchForm(text, step, name),
          onCancel: close
        });
        this.setBranchProblems = form.setProblems;
        replaceChildren(this.formNode, [form.node]);
        form.node.querySelector('textarea')?.focus();
        return;
      }
      case 'rename':
        return replaceChildren(this.formNode, [renameForm(sum.branch, to => void c.renameBranch(sum.branch, to), close)]);
      case 'record':
        return replaceChildren(this.formNode, [recordForm(sum.branches, sum.branch, (q, chosen) => void c.writeDecisionRecord(q, chosen), close)]);
    }
  }

  /** Draws the plot once the node is in the page, and follows theme changes. */
  protected onAfterAttach(): void {
    this.themeObserver = new MutationObserver(() => {
      this.panels.invalidate();
      this.render(this.controller.state);
      this.panels.drawTrace();
    });
    this.themeObserver.observe(document.body, { attributes: true, attributeFilter: ['data-jp-theme-name', 'data-jp-theme-light'] });
    this.panels.drawTrace(true);
  }

  /** Stops following theme changes. */
  protected onBeforeDetach(): void {
    this.themeObserver?.disconnect();
    this.themeObserver = null;
  }

  /** Re-lays out the displayed plots after a resize (hidden ones are laid out when shown). */
  protected onResize(): void {
    this.panels.resize();
  }

  /** Disconnects from the controller and frees the plots. Idempotent. */
  dispose(): void {
    if (this.isDisposed) return;
    this.controller.changed.disconnect(this.onState, this);
    if (this.progressTimer !== null) window.clearTimeout(this.progressTimer);
    this.progressTimer = null;
    this.panels.dispose();
    super.dispose();
  }
}

/**
 * The step the status line shows: the branch's cursor, or, while stepping, the newest record
 * that has arrived (the summary is refreshed when the request ends).
 */
function shownStep(s: CellViewState): number {
  const step = s.summary?.step ?? 0;
  const last = s.trajectory[s.trajectory.length - 1];
  return s.busy !== null && last !== undefined && last.step > step ? last.step : step;
}

/** Options of {@link StepwellCellWidget}. */
export namespace StepwellCellWidget {
  /** Construction options. */
  export interface Options {
    controller: CellController;
  }
}

/** The tab a readout lives on (for commands that open one). */
