/**
 * The plumbing every action of a cell controller shares: the view state and its signal, the
 * engine (started lazily and resumed from the ledger), one-request exchanges with the busy state
 * shown, confirmations before work is lost, and writing the ledger and outputs after an action.
 * No DOM, no JupyterLab.
 */
import { Signal } from '@lumino/signaling';
import type { ISignal } from '@lumino/signaling';
import type { EngineClient, FinalReply, ProgressReply, RequestBody } from '../worker/client';
import type { BranchReadouts, SessionSummary, SpecFilesPayload, SpecProblem } from '../worker/protocol';
import { cellFileNames, type SpecPatch } from '../experiment/patch';
import type { Figure } from '../figures/trace';
import type { FigureImage } from './plot';
import type { CellHost, CellSettings, LedgerContent, LedgerGlue, LedgerRead, SpecChecker } from './ports';
import { cellSummary, errorMarkdown, lossImage, markdownSummary, meanMs, msBound, problemLine, TIMING_WINDOW, unreadableMarkdown } from './summary';
import type { CellViewState, Confirmation, Notice } from './view-state';
import { diagnosisOf, emptyDiagnosis, initialViewState, viewFromLedger } from './view-state';

/** What the page needs of spec text: its problems and the files it names. */
export interface SpecFacts {
  problems: SpecProblem[];
  files: string[];
}

/** Collaborators of a cell controller. */
export interface ControllerDeps {
  host: CellHost;
  /** Starts an engine (a Worker in the browser, an in-process host in tests). */
  engine: () => EngineClient;
  ledger: LedgerGlue;
  checkSpec: SpecChecker;
  /**
   * The same check off the page thread (the app's reader worker), with the files the text names
   * (each of `chains` applied, for a fork): used as the user types, before a run or Reset, after
   * a ledger is read and before a fork, so a spec with 10⁵ inline rows is never parsed on the
   * page. Absent: `checkSpec` and `cellFileNames` run in the calling thread.
   */
  specFactsLater?: (text: string, chains?: readonly (readonly SpecPatch[])[]) => Promise<SpecFacts>;
  settings: () => CellSettings;
  /** Turns a figure into an image for the decision record (plotly in the browser); absent: records carry no image. */
  imageOf?: (figure: Figure) => Promise<FigureImage | null>;
}

/** State, engine and persistence of one cell (see the module comment). */
export abstract class ControllerBase {
  protected readonly deps: ControllerDeps;
  protected st: CellViewState = initialViewState();
  private readonly changedSignal = new Signal<this, CellViewState>(this);
  protected engine: EngineClient | null = null;
  /** True when the engine holds the session shown in the state. */
  private engineInSync = false;
  /** The ledger content last read: what a lazily started engine resumes from. */
  private content: LedgerContent | null = null;
  private disposedFlag = false;
  /** The text whose problems the engine reported (reading its files); null when the shown problems are the live check's. */
  private engineChecked: string | null = null;
  /** Counts ledger reads; only the newest one's answer is applied. */
  private readSeq = 0;
  /** Counts live spec checks; only the newest one's answer is applied. */
  private checkSeq = 0;
  /** True while a live check is with the worker; {@link liveAgain} asks for one more when it ends. */
  private liveChecking = false;
  private liveAgain = false;
  /** The last text the worker checked, with its limits and answer (see {@link factsLater}). */
  private lastFacts: { text: string; limits: CellSettings['limits']; facts: Promise<SpecFacts> } | null = null;

  protected constructor(deps: ControllerDeps) {
    this.deps = deps;
  }

  /** Fires with the new state after every change. */
  get changed(): ISignal<this, CellViewState> {
    return this.changedSignal;
  }

  /** The current view state (replace-only; do not mutate). */
  get state(): CellViewState {
    return this.st;
  }

  /** The settings in effect. */
  get settings(): CellSettings {
    return this.deps.settings();
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

  protected set(patch: Partial<CellViewState>): void {
    if (this.disposedFlag) return;
    // Problems from anywhere but a saved session's files are the text's own.
    if ('problems' in patch && !('filesBlocked' in patch)) patch = { ...patch, filesBlocked: false };
    this.st = { ...this.st, ...patch };
    this.changedSignal.emit(this.st);
  }

  protected notice(level: Notice['level'], text: string): void {
    this.set({ notice: { level, text } });
  }

  /** Shows a message in the cell (e.g. a bad value typed into a control). */
  say(level: Notice['level'], text: string): void {
    this.notice(level, text);
  }

  /**
   * Reads (or re-reads) the ledger from the cell, without touching the engine. In the app the
   * ledger is checked in a worker: until it answers the cell shows `reading`, and a newer read
   * supersedes an older one. An unreadable ledger in a cell without our output gets an output
   * saying so (the metadata itself is never changed here).
   *
   * @returns a promise that settles when the read was applied.
   */
  readLedger(): Promise<void> {
    const raw = this.deps.host.readLedger();
    const seq = ++this.readSeq;
    this.content = null;
    this.engineInSync = false;
    // Nothing stored: nothing to read (and nothing to wait for before a first run).
    const read = raw === undefined || raw === null ? { kind: 'absent' as const } : this.deps.ledger.read(raw, this.deps.settings().limits, this.deps.settings().maxLedgerBytes);
    if (!(read instanceof Promise)) {
      this.applyRead(read, raw);
      return Promise.resolve();
    }
    this.set({ ledger: 'reading', ledgerMessage: undefined, summary: null, trajectory: [], notice: { level: 'info', text: 'Reading the saved ledger…' } });
    return read.then(r => {
      if (seq === this.readSeq && !this.disposedFlag) this.applyRead(r, raw);
    });
  }

  private applyRead(read: LedgerRead, raw: unknown): void {
    this.content = read.kind === 'ok' ? read.content : null;
    this.engineInSync = false;
    const later = this.deps.specFactsLater !== undefined;
    // With a worker the text is checked there (below), never parsed on the page.
    const view = viewFromLedger(read, raw, this.deps.host.readSource(), later ? () => [] : this.deps.checkSpec);
    // A restored session has no fresh timing: the stored records' wall times give one.
    const recent = read.kind === 'ok' ? read.content.trajectory.slice(-TIMING_WINDOW) : [];
    this.set({ ...view, msPerStep: meanMs(recent), msBelow: msBound(recent) });
    if (read.kind === 'corrupt' && this.deps.host.hasOutput?.() === false) this.writeUnreadable();
    if (later) {
      this.engineChecked = null;
      void this.sourceChanged();
    }
  }

  /** Writes an output that says the ledger cannot be read (so a cell without outputs shows it). */
  protected writeUnreadable(): void {
    this.deps.host.writeOutputs(null, unreadableMarkdown(this.st.ledgerMessage ?? 'unknown problem'));
  }

  /**
   * Re-checks the editor's text (call on source changes, debounced); in the worker when the
   * deps offer it, where only the newest check's answer is applied. A change that leaves the text
   * as it was (outputs or metadata written) keeps the problems shown: the engine's problems with
   * the files the text names stay until the text itself changes.
   */
  sourceChanged(): Promise<void> {
    const source = this.deps.host.readSource();
    const specEdited = this.st.sessionSpec !== null && source !== this.st.sessionSpec;
    if (source === this.engineChecked) {
      this.set({ specEdited });
      return Promise.resolve();
    }
    this.engineChecked = null;
    const later = this.deps.specFactsLater;
    if (later === undefined) {
      this.set({ problems: this.deps.checkSpec(source), specEdited });
      return Promise.resolve();
    }
    const seq = ++this.checkSeq;
    this.set({ specEdited });
    // One live check at a time: texts typed meanwhile are not queued in the worker, the newest is checked next.
    if (this.liveChecking) {
      this.liveAgain = true;
      return Promise.resolve();
    }
    return this.liveCheck(later, source, seq);
  }

  private async liveCheck(later: NonNullable<ControllerDeps['specFactsLater']>, source: string, seq: number): Promise<void> {
    this.liveChecking = true;
    try {
      const facts = await this.factsLater(later, source);
      if (seq === this.checkSeq && !this.disposedFlag && this.engineChecked === null) this.set({ problems: facts.problems });
    } finally {
      this.liveChecking = false;
    }
    if (this.liveAgain && !this.disposedFlag) {
      this.liveAgain = false;
      await this.sourceChanged();
    }
  }

  /**
   * The worker's facts of `text`, reused while the text and the limits stay the same: writing
   * outputs or the ledger re-fires the cell's change signal, and re-parsing 10⁵ rows each time
   * would queue seconds of work before the user's next action.
   */
  private factsLater(later: NonNullable<ControllerDeps['specFactsLater']>, text: string): Promise<SpecFacts> {
    const limits = this.deps.settings().limits;
    const known = this.lastFacts;
    if (known !== null && known.text === text && known.limits === limits) return known.facts;
    const facts = later(text);
    this.lastFacts = { text, limits, facts };
    // A failed check is not kept.
    facts.catch(() => {
      if (this.lastFacts?.facts === facts) this.lastFacts = null;
    });
    return facts;
  }

  /**
   * The problems of `text` and the files it names: in the worker when the deps offer it (the
   * page shows "Checking the spec" meanwhile), else in the calling thread, synchronously.
   *
   * @returns the facts, or a promise of them.
   */
  protected specFacts(text: string): SpecFacts | Promise<SpecFacts> {
    const later = this.deps.specFactsLater;
    if (later === undefined) return { problems: this.deps.checkSpec(text), files: cellFileNames(text) };
    this.set({ busy: { action: 'Checking the spec', done: 0, total: 0 } });
    return this.factsLater(later, text).then(
      facts => {
        this.set({ busy: null });
        return facts;
      },
      (err: unknown) => {
        this.set({ busy: null });
        throw err;
      }
    );
  }

  /** The files `text` names with each of `chains` applied (a fork's), off the page when the deps allow. */
  protected async fileNames(text: string, chains: readonly (readonly SpecPatch[])[]): Promise<string[]> {
    const later = this.deps.specFactsLater;
    return later === undefined ? cellFileNames(text, chains) : (await later(text, chains)).files;
  }

  /** Opens or closes an inline form. */
  setForm(form: CellViewState['form']): void {
    this.set({ form, branchProblems: [] });
  }

  /** Drops the pending confirmation (the user said no). */
  cancelConfirm(): void {
    this.set({ confirm: null });
  }

  /**
   * When steps or branches would be lost, asks first: sets {@link CellViewState.confirm} and
   * returns true (the caller stops; the confirmation repeats the action with force).
   */
  protected askBeforeLosingWork(what: string): boolean {
    const s = this.st.summary;
    if (s === null) return false;
    const own = s.branches.reduce((a, b) => a + (b.tip - (b.forkStep ?? 0)), 0);
    if (own === 0 && s.branches.length <= 1) return false;
    const branches = s.branches.length > 1 ? ` on ${s.branches.length} branches` : '';
    this.askConfirm({ kind: 'reset', text: `${what} and discards ${own} step${own === 1 ? '' : 's'}${branches}. Start over?` });
    return true;
  }

  protected askConfirm(c: Confirmation): void {
    this.set({ confirm: c });
  }

  /**
   * Reads the files `names` through the host (relative to the notebook) into a request's file
   * fields, with the buffers to transfer: each file's bytes move to the engine, never copied.
   */
  protected async readFiles(names: readonly string[]): Promise<{ payload: SpecFilesPayload; transfer: ArrayBuffer[] }> {
    if (names.length === 0) return { payload: {}, transfer: [] };
    const read = this.deps.host.readFiles
      ? await this.deps.host.readFiles(names)
      : { files: new Map<string, Uint8Array>(), problems: new Map(names.map((n) => [n, 'this notebook host reads no files (inline the data, or open the notebook in JupyterLab with Stepwell)'])) };
    const files: Record<string, Uint8Array> = {};
    const transfer = new Set<ArrayBuffer>();
    for (const [name, bytes] of read.files) {
      files[name] = bytes;
      // Only a buffer the bytes fill alone moves; a view into a larger one is copied instead.
      if (bytes.buffer instanceof ArrayBuffer && bytes.byteOffset === 0 && bytes.byteLength === bytes.buffer.byteLength) transfer.add(bytes.buffer);
    }
    const payload: SpecFilesPayload = { files };
    if (read.problems.size > 0) payload.fileProblems = Object.fromEntries(read.problems);
    return { payload, transfer: [...transfer] };
  }

  /**
   * Starts a new session from `source` in the engine.
   * @param files - the files `source` names (from {@link specFacts}); absent: found here.
   */
  protected async loadFresh(source: string, files?: readonly string[]): Promise<boolean> {
    const engine = this.ensureEngine();
    this.set({ busy: { action: 'Starting', done: 0, total: 0 }, notice: null, confirm: null, audit: null, curvature: null, sharpness: [], diagnosis: emptyDiagnosis(), deeper: {}, verify: null, comparison: { names: [], axis: this.st.comparison.axis, data: null } });
    const { payload, transfer } = await this.readFiles(files ?? (await this.fileNames(source, [])));
    const reply = await engine.request({ kind: 'load', specText: source, checkpointEvery: this.deps.settings().checkpointEvery, limits: this.deps.settings().limits, ...payload }, undefined, transfer);
    this.set({ busy: null });
    if (reply.kind === 'spec-errors') {
      this.engineChecked = source;
      this.set({ problems: reply.errors });
      // A cell with no session yet has no widget: the error output brings it (and says it to other viewers).
      if (this.st.summary === null) this.deps.host.writeOutputs(null, errorMarkdown(reply.errors.map(problemLine)));
      this.notice('error', 'The engine rejected the spec; see the problems above.');
      return false;
    }
    if (reply.kind !== 'ready') return this.failed(reply);
    this.engineInSync = true;
    this.set({
      ledger: 'ok',
      ledgerMessage: undefined,
      problems: [],
      sessionSpec: source,
      specEdited: false,
      summary: reply.summary,
      trajectory: reply.trajectory,
      diagnosis: diagnosisOf(reply.readouts),
      warnings: reply.warnings,
      msPerStep: undefined,
      msBelow: undefined,
      notice: reply.warnings.length > 0 ? { level: 'warn', text: reply.warnings.map(problemLine).join('; ') } : null
    });
    return this.persist();
  }

  protected ensureEngine(): EngineClient {
    if (this.engine === null) {
      this.engine = this.deps.engine();
      this.engineInSync = false;
    }
    return this.engine;
  }

  /** Makes sure the engine holds the session in the state (resuming every branch from the ledger). */
  protected async syncEngine(): Promise<EngineClient | null> {
    const engine = this.ensureEngine();
    if (this.engineInSync) return engine;
    const c = this.content;
    if (c === null) {
      this.notice('info', 'No session yet: run the cell (Shift+Enter) to start one from the spec.');
      return null;
    }
    const { payload, transfer } = await this.readFiles(c.files);
    const reply = await engine.request({ kind: 'load', specText: c.specText, checkpointEvery: this.deps.settings().checkpointEvery, resume: c.raw, limits: this.deps.settings().limits, ...payload }, undefined, transfer);
    if (reply.kind === 'spec-errors') {
      // Problems of the saved spec (a file changed or unreadable) sit at their keys, like the live check's.
      this.engineChecked = this.deps.host.readSource();
      this.set({ problems: reply.errors, filesBlocked: true });
      this.notice('error', 'The saved session cannot continue with the files as they are now (see the problems above): put the old files back, or Reset to start over from these.');
      return null;
    }
    if (reply.kind !== 'ready') {
      this.failed(reply);
      return null;
    }
    this.engineInSync = true;
    // The files are back as they were: their problems no longer hold.
    if (this.st.filesBlocked === true) this.set({ problems: [], notice: null });
    return engine;
  }

  /**
   * One request with the busy state shown (progress included) and the engine synced first.
   *
   * @param onProgress - also called with each progress reply (after the busy state is updated).
   * @returns the final reply, or null when busy or no session exists (a notice says why).
   */
  protected async exchange(action: string, body: RequestBody, total = 0, names: readonly string[] = [], onProgress?: (p: ProgressReply) => void): Promise<FinalReply | null> {
    if (this.st.busy !== null) return null;
    const engine = await this.syncEngine();
    if (engine === null) return null;
    this.set({ busy: { action, done: 0, total }, confirm: null });
    // Files a request names (a fork whose patch names a new data file) are read first.
    const { payload, transfer } = await this.readFiles(names);
    const reply = await engine.request(
      { ...body, ...payload } as RequestBody,
      p => {
        this.set({ busy: { action, done: p.done, total: p.total } });
        onProgress?.(p);
      },
      transfer
    );
    this.set({ busy: null });
    return reply;
  }

  /** Shows a branch as a reply describes it: summary, trace and its readouts. */
  protected applyView(reply: { summary: SessionSummary; trajectory: FinalReplyTrajectory; readouts: BranchReadouts }): void {
    this.set({
      summary: reply.summary,
      trajectory: reply.trajectory,
      curvature: reply.readouts.curvature,
      sharpness: reply.readouts.sharpness,
      audit: reply.readouts.audit,
      diagnosis: diagnosisOf(reply.readouts),
      deeper: reply.readouts.deeper ?? {},
      verify: null
    });
  }

  /** Takes a branch's readouts after a measurement or a run: the measurements and the diagnosis. */
  protected applyReadouts(r: BranchReadouts): void {
    this.set({ curvature: r.curvature, sharpness: r.sharpness, audit: r.audit, diagnosis: diagnosisOf(r), deeper: r.deeper ?? {} });
  }

  protected failed(reply: FinalReply): false {
    const text = reply.kind === 'failed' ? reply.message : `unexpected engine reply '${reply.kind}'`;
    this.notice('error', `Stepwell engine: ${text}`);
    return false;
  }

  /**
   * Asks the worker for the whole ledger of the session as it is now, or returns null without a
   * session. Sent before the page redraws an action's result, so the worker builds the ledger
   * while the page draws (the next request would otherwise queue behind it).
   */
  protected requestLedger(): Promise<FinalReply> | null {
    const engine = this.engine;
    const specText = this.st.sessionSpec;
    if (engine === null || specText === null) return null;
    return engine.request({ kind: 'ledger', specText, checkpointCap: this.deps.settings().checkpointCap, maxBytes: this.deps.settings().maxLedgerBytes });
  }

  /**
   * Has the worker build the whole ledger, then writes it and the outputs in one go each.
   * @param requested - the ledger request already sent by {@link requestLedger} (default: sent now).
   */
  protected async persist(requested: Promise<FinalReply> | null = this.requestLedger()): Promise<boolean> {
    if (requested === null) return false;
    const reply = await requested;
    if (reply.kind === 'failed') {
      // Keep the notice of the action (e.g. a non-finite loss) and add why nothing was saved.
      const before = this.st.notice !== null && this.st.notice.level !== 'info' ? `${this.st.notice.text} ` : '';
      this.notice('error', `${before}The ledger was not written (the notebook keeps the previous one): ${reply.message}`);
      this.writeOutputs();
      return false;
    }
    if (reply.kind !== 'ledger') return this.failed(reply);
    this.deps.host.writeLedger(reply.value);
    this.set({ ledgerBytes: reply.bytes, summary: reply.summary, trajectory: reply.trajectory });
    this.writeOutputs();
    return true;
  }

  protected writeOutputs(): void {
    const s = this.st.summary;
    if (s === null) return;
    const summary = cellSummary(s, this.st.trajectory[this.st.trajectory.length - 1]);
    this.deps.host.writeOutputs(summary, markdownSummary(summary, lossImage(this.st.trajectory, s.step < s.tip ? s.step : undefined)));
  }
}

/** Step records as replies carry them. */
type FinalReplyTrajectory = Extract<FinalReply, { kind: 'rewound' }>['trajectory'];
