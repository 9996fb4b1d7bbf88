/**
 * The controller of one stepwell cell: reads the ledger, drives the engine, keeps the
 * view state, and writes the whole ledger back after each completed action. No DOM and no
 * JupyterLab imports; views subscribe to {@link CellController.changed}.
 */
import { Signal } from '@lumino/signaling';
import type { ISignal } from '@lumino/signaling';
import type { StepRecord } from '../core/state';
import type { EngineClient, FinalReply, ProgressReply, RequestBody } from '../worker/client';
import type { StopCondition } from '../worker/protocol';
import type { CellHost, CellSettings, LedgerContent, LedgerGlue, SpecChecker } from './ports';
import { cellSummary, errorMarkdown, markdownSummary, meanMs, problemLine, verifyLine } from './summary';
import type { CellViewState, Notice, ReadoutTab } from './view-state';
import { initialViewState, mergeSharpness, viewFromLedger } from './view-state';
import { RECENT_RECORDS, thinInPlace } from '../worker/sampling';

/** Collaborators of a {@link CellController}. */
export interface ControllerDeps {
  host: CellHost;
  /** Starts an engine (a Worker in the browser, an in-process host in tests). */
  engine: () => EngineClient;
  ledger: LedgerGlue;
  checkSpec: SpecChecker;
  settings: () => CellSettings;
}

/** Drives one stepwell cell. */
export class CellController {
  private readonly deps: ControllerDeps;
  private st: CellViewState = initialViewState();
  private readonly changedSignal = new Signal<this, CellViewState>(this);
  private engine: EngineClient | null = null;
  /** True when the engine holds the session shown in the state. */
  private engineInSync = false;
  /** The ledger content last read or written: what a lazily started engine resumes from. */
  private content: LedgerContent | null = null;
  private disposedFlag = false;

  /** @param deps - the cell, engine factory, ledger glue, spec checker and settings. */
  constructor(deps: ControllerDeps) {
    this.deps = deps;
    this.readLedger();
  }

  /** Fires with the new state after every change. */
  get changed(): ISignal<this, CellViewState> {
    return this.changedSignal;
  }

  /** The current view state (replace-only; do not mutate). */
  get state(): CellViewState {
    return this.st;
  }

  /** Steps of "Step ×N" from the settings. */
  get defaultN(): number {
    return this.deps.settings().defaultN;
  }

  /** True after {@link dispose}. */
  get isDisposed(): boolean {
    return this.disposedFlag;
  }

  /** Ends the engine and disconnects views. Idempotent. */
  dispose(): void {
    if (this.disposedFlag) return;
    this.disposedFlag = true;
    this.engine?.dispose();
    this.engine = null;
    Signal.clearData(this);
  }

  private set(patch: Partial<CellViewState>): void {
    if (this.disposedFlag) return;
    this.st = { ...this.st, ...patch };
    this.changedSignal.emit(this.st);
  }

  private notice(level: Notice['level'], text: string): void {
    this.set({ notice: { level, text } });
  }

  /** Shows a message in the cell (e.g. a bad value typed into a control). */
  say(level: Notice['level'], text: string): void {
    this.notice(level, text);
  }

  /** Reads (or re-reads) the ledger from the cell, without touching the engine. */
  readLedger(): void {
    const raw = this.deps.host.readLedger();
    const read = this.deps.ledger.read(raw);
    this.content = read.kind === 'ok' ? read.content : null;
    this.engineInSync = false;
    this.set(viewFromLedger(read, raw, this.deps.host.readSource(), this.deps.checkSpec));
  }

  /** Re-checks the editor's text (call on source changes, debounced). */
  sourceChanged(): void {
    const source = this.deps.host.readSource();
    this.set({
      problems: this.deps.checkSpec(source),
      specEdited: this.st.sessionSpec !== null && source !== this.st.sessionSpec
    });
  }

  /** Switches the readout tab. */
  setTab(tab: ReadoutTab): void {
    this.set({ tab });
  }

  /** Opens or closes an inline form. */
  setForm(form: CellViewState['form']): void {
    this.set({ form });
  }

  /**
   * Runs the cell (Shift+Enter): starts a new session from the editor's text when it
   * changed (or none exists), else keeps the session and refreshes the outputs.
   *
   * @param force - also replace an unreadable ledger.
   * @returns true when the cell now holds a session for its text.
   */
  async run(force = false): Promise<boolean> {
    if (this.st.busy !== null) {
      this.notice('warn', `Busy with ${this.st.busy.action}: stop it first.`);
      return false;
    }
    const source = this.deps.host.readSource();
    const problems = this.deps.checkSpec(source);
    this.set({ problems });
    if (problems.length > 0) {
      if (this.st.summary === null) this.deps.host.writeOutputs(null, errorMarkdown(problems.map(problemLine)));
      this.notice('error', `The spec has ${problems.length} problem${problems.length > 1 ? 's' : ''}; nothing was run.`);
      return false;
    }
    if (this.st.ledger === 'corrupt' && !force) {
      this.notice('error', 'The saved ledger cannot be read; press "Start over" to replace it with a new session.');
      return false;
    }
    if (this.st.ledger === 'ok' && this.st.sessionSpec === source) {
      this.writeOutputs();
      return true;
    }
    return this.loadFresh(source);
  }

  /** Discards the session and starts again at step 0 from the editor's current text. */
  async reset(): Promise<boolean> {
    if (this.st.busy !== null) return false;
    const source = this.deps.host.readSource();
    const problems = this.deps.checkSpec(source);
    if (problems.length > 0) {
      this.set({ problems, notice: { level: 'error', text: 'Fix the spec before resetting; nothing was changed.' } });
      return false;
    }
    return this.loadFresh(source);
  }

  private async loadFresh(source: string): Promise<boolean> {
    const engine = this.ensureEngine();
    this.set({ busy: { action: 'Starting', done: 0, total: 0 }, notice: null, audit: null, curvature: null, sharpness: [], verify: null });
    const reply = await engine.request({ kind: 'load', specText: source, checkpointEvery: this.deps.settings().checkpointEvery });
    this.set({ busy: null });
    if (reply.kind === 'spec-errors') {
      this.set({ problems: reply.errors });
      this.notice('error', 'The engine rejected the spec; see the problems above.');
      return false;
    }
    if (reply.kind !== 'ready') return this.failed(reply);
    this.engineInSync = true;
    this.set({
      ledger: 'ok',
      ledgerMessage: undefined,
      sessionSpec: source,
      specEdited: false,
      summary: reply.summary,
      trajectory: reply.trajectory,
      warnings: reply.warnings,
      msPerStep: undefined,
      notice: reply.warnings.length > 0 ? { level: 'warn', text: reply.warnings.map(problemLine).join('; ') } : null
    });
    return this.persist();
  }

  private ensureEngine(): EngineClient {
    if (this.engine === null) {
      this.engine = this.deps.engine();
      this.engineInSync = false;
    }
    return this.engine;
  }

  /** Makes sure the engine holds the session in the state (resuming from the ledger). */
  private async syncEngine(): Promise<EngineClient | null> {
    const engine = this.ensureEngine();
    if (this.engineInSync) return engine;
    const c = this.content;
    if (c === null) {
      this.notice('info', 'No session yet: run the cell (Shift+Enter) to start one from the spec.');
      return null;
    }
    const reply = await engine.request({
      kind: 'load',
      specText: c.specText,
      checkpointEvery: this.deps.settings().checkpointEvery,
      resume: { state: c.state, trajectory: c.trajectory, checkpoints: c.checkpoints }
    });
    if (reply.kind === 'spec-errors') {
      this.notice('error', `The saved session's spec no longer parses: ${reply.errors.map(problemLine).join('; ')}`);
      return null;
    }
    if (reply.kind !== 'ready') {
      this.failed(reply);
      return null;
    }
    this.engineInSync = true;
    return engine;
  }

  /** Advances `n` optimizer steps (default: the "Step ×N" setting). */
  step(n = this.deps.settings().defaultN): Promise<boolean> {
    return this.stepping(`Step ×${n}`, { kind: 'step', n }, n);
  }

  /** Advances `n` steps measuring the sharpness about 50 times along the way (and at the start). */
  trackSharpness(n = this.deps.settings().defaultN): Promise<boolean> {
    const every = Math.max(1, Math.round(n / 50));
    return this.stepping(`Step ×${n} tracking λmax`, { kind: 'step', n, sharpnessEvery: every }, n);
  }

  /** Steps until `condition` holds, at most `maxSteps` steps. */
  runUntil(condition: StopCondition, maxSteps: number): Promise<boolean> {
    this.set({ runUntil: { condition, maxSteps }, form: null });
    return this.stepping(`Run until (max ${maxSteps})`, { kind: 'run-until', condition, maxSteps }, maxSteps);
  }

  private async stepping(action: string, body: RequestBody, total: number): Promise<boolean> {
    if (this.st.busy !== null) return false;
    if (this.st.specEdited) {
      this.notice('warn', 'The spec was edited since this session started: run the cell or Reset to apply it, or undo the edit to continue.');
      return false;
    }
    const engine = await this.syncEngine();
    if (engine === null) return false;
    // Only the newest records are kept for the timing; a long run would otherwise hold all of them.
    const produced: StepRecord[] = [];
    this.set({ busy: { action, done: 0, total }, notice: null, verify: null });
    const onProgress = (p: ProgressReply): void => {
      for (const r of p.records.slice(-RECENT_RECORDS)) produced.push(r);
      if (produced.length > 2 * RECENT_RECORDS) produced.splice(0, produced.length - RECENT_RECORDS);
      this.set({
        busy: { action, done: p.done, total },
        trajectory: thinInPlace(this.st.trajectory.concat(p.records)),
        sharpness: mergeSharpness(this.st.sharpness, p.sharpness)
      });
    };
    const reply = await engine.request(body, onProgress);
    if (reply.kind !== 'stepped') {
      this.set({ busy: null });
      return this.failed(reply);
    }
    for (const r of reply.records) produced.push(r);
    const last = reply.records.length > 0 ? reply.records[reply.records.length - 1] : undefined;
    let notice: Notice | null = null;
    switch (reply.reason) {
      case 'stopped':
        notice = { level: 'info', text: `Stopped at step ${reply.summary.step}.` };
        break;
      case 'non-finite':
        notice = {
          level: 'error',
          text: `The loss became non-finite at step ${last?.step ?? reply.summary.step}: the recipe diverged. Rewind or change the recipe.`
        };
        break;
      case 'condition':
        notice = { level: 'info', text: `Condition met at step ${reply.summary.step}.` };
        break;
      case 'done':
        break;
    }
    this.set({
      busy: null,
      summary: reply.summary,
      trajectory: thinInPlace(this.st.trajectory.concat(reply.records)),
      sharpness: mergeSharpness(this.st.sharpness, reply.sharpness),
      msPerStep: meanMs(produced.slice(-RECENT_RECORDS)),
      notice
    });
    return this.persist();
  }

  /**
   * One request with the busy state shown (progress included) and the engine synced first.
   *
   * @returns the final reply, or null when busy or no session exists (a notice says why).
   */
  private async exchange(action: string, body: RequestBody, total = 0): Promise<FinalReply | null> {
    if (this.st.busy !== null) return null;
    const engine = await this.syncEngine();
    if (engine === null) return null;
    this.set({ busy: { action, done: 0, total } });
    const reply = await engine.request(body, p => this.set({ busy: { action, done: p.done, total: p.total } }));
    this.set({ busy: null });
    return reply;
  }

  /** Rewinds to `step` (≤ the current step), replaying from the nearest checkpoint. */
  async rewind(step: number): Promise<boolean> {
    this.set({ form: null });
    const reply = await this.exchange(`Rewind to ${step}`, { kind: 'rewind', step });
    if (reply === null) return false;
    if (reply.kind !== 'rewound') return this.failed(reply);
    this.set({
      summary: reply.summary,
      trajectory: reply.trajectory,
      audit: null,
      curvature: null,
      verify: null,
      notice: null,
      sharpness: this.st.sharpness.filter(p => p.step <= reply.summary.step)
    });
    return this.persist();
  }

  /** Runs the gradient audit at the current parameters. */
  async audit(): Promise<boolean> {
    const reply = await this.exchange('Gradient audit', { kind: 'gradcheck', sample: this.deps.settings().auditSample });
    if (reply === null) return false;
    if (reply.kind !== 'audit') return this.failed(reply);
    this.set({ audit: { step: reply.step, result: reply.result }, tab: 'audit' });
    return true;
  }

  /** Measures the Hessian spectrum and the recipe's stability limit at the current step. */
  async measureCurvature(): Promise<boolean> {
    const { eigenCount, denseHessianLimit } = this.deps.settings();
    const reply = await this.exchange('Measuring curvature', { kind: 'curvature', k: eigenCount, denseLimit: denseHessianLimit });
    if (reply === null) return false;
    if (reply.kind !== 'curvature') return this.failed(reply);
    this.set({ curvature: reply.result, tab: 'curvature' });
    return true;
  }

  /** Replays from the seed and compares with the current session. */
  async verify(): Promise<boolean> {
    this.set({ verify: null });
    const reply = await this.exchange('Verify', { kind: 'verify' }, this.st.summary?.step ?? 0);
    if (reply === null) return false;
    if (reply.kind !== 'verified') return this.failed(reply);
    const ok = reply.result.match === 'bit-identical';
    this.set({ verify: reply.result, notice: { level: ok ? 'info' : 'error', text: verifyLine(reply.result) } });
    return ok;
  }

  /** Asks the engine to end the running action early. */
  stop(): void {
    this.engine?.stop();
  }

  private failed(reply: FinalReply): false {
    const text = reply.kind === 'failed' ? reply.message : `unexpected engine reply '${reply.kind}'`;
    this.notice('error', `Stepwell engine: ${text}`);
    return false;
  }

  /** Has the worker build the whole ledger, then writes it and the outputs in one go each. */
  private async persist(): Promise<boolean> {
    const engine = this.engine;
    const specText = this.st.sessionSpec;
    if (engine === null || specText === null) return false;
    const reply = await engine.request({ kind: 'ledger', specText, checkpointCap: this.deps.settings().checkpointCap });
    if (reply.kind === 'failed') {
      this.notice('error', `The ledger was not written (the notebook keeps the previous one): ${reply.message}`);
      return false;
    }
    if (reply.kind !== 'ledger') return this.failed(reply);
    this.deps.host.writeLedger(reply.value);
    this.set({ ledgerBytes: reply.bytes, summary: reply.summary, trajectory: reply.trajectory });
    this.writeOutputs();
    return true;
  }

  private writeOutputs(): void {
    const s = this.st.summary;
    if (s === null) return;
    const summary = cellSummary(s, this.st.trajectory[this.st.trajectory.length - 1]);
    this.deps.host.writeOutputs(summary, markdownSummary(summary));
  }
}
