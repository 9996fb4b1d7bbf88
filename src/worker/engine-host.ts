/**
 * The engine host: the worker's whole behaviour as a plain class. The worker entry only
 * forwards messages to {@link EngineHost.receive}; unit tests call it directly in Node.
 *
 * A cell's branches live in a {@link CellGrove} over core's {@link Grove}: stepping,
 * checkpoints, trajectory bounds, rewind and replay verdicts are the grove's; the branch list,
 * comparisons and the ledger are the cell grove's. The host adds what only a worker needs:
 * requests in arrival order, time slices of about {@link EngineHost.Options.chunkMs}
 * milliseconds with a `progress` reply and a yield to the event loop between them (so a
 * `stop` request can arrive and be honoured between updates), samples of records instead of
 * whole trajectories, and the protocol's reply shapes. Requests act on the active branch.
 */
import type { StepRecord } from '../core/state';
import type { GroveTask, RunReason, StepHooks } from '../core/session';
import { cellFileNames, type SpecPatch } from '../experiment/patch';
import type { EngineCore } from './engine-core';
import type { BranchReadouts, CurvatureResult, EngineReply, EngineRequest, SharpnessPoint, SpecFilesPayload, StopCondition, VerifyResult } from './protocol';
import { checkRequest } from './protocol';
import { REPLY_SAMPLE, sampleRecords } from './sampling';
import { CellGrove, SpecProblemsError } from './cell-grove';
import type { CellFiles } from './engine-core';
import { viewLedger } from './ledger-view';
import { grouped } from '../experiment/limits';
import { parseSpec } from '../experiment';
import { deeperTask } from '../core/probe/readouts-at';
import { batchOnlyComparison } from './batch-branches';
import { keepDeeper, planePath, thinDeeper, type DeeperRequest } from './deeper';

/** Something that can post replies (the worker's `self.postMessage`, or a test array). */
export type ReplySink = (reply: EngineReply) => void;

/** Why a stepping request ended (the protocol's `reason`). */
type StepEnd = 'done' | 'stopped' | 'condition' | 'non-finite';

/** The loaded cell. */
interface Loaded {
  cell: CellGrove;
  checkpointEvery: number;
}

const nextTick = (): Promise<void> => new Promise(resolve => setTimeout(resolve, 0));

/**
 * A turn of the event loop without a timer's clamp (nested zero timeouts wait 4 ms each, which
 * over a readout's hundred-odd turns would cost half a second): a message to itself, which the
 * loop delivers after the messages already waiting, such as a stop request.
 */
function messageTurn(): Promise<void> {
  if (typeof MessageChannel === 'undefined') return nextTick();
  return new Promise(resolve => {
    const channel = new MessageChannel();
    channel.port1.onmessage = () => {
      channel.port1.close();
      channel.port2.close();
      resolve();
    };
    channel.port2.postMessage(null);
  });
}

/** The files of a load or fork request as maps (absent fields: none). */
function filesOf(r: SpecFilesPayload): CellFiles {
  return { files: new Map(Object.entries(r.files ?? {})), problems: new Map(Object.entries(r.fileProblems ?? {})) };
}

/** Drives one session on behalf of one stepwell cell. */
export class EngineHost {
  private readonly core: EngineCore;
  private readonly post: ReplySink;
  private readonly chunkMs: number;
  private readonly findingsEveryMs: number;
  private loaded: Loaded | null = null;
  private queue: Promise<void> = Promise.resolve();
  private running: number | null = null;
  private stopFlag = false;
  /** Settles when the running action is asked to stop. */
  private stopSignal: { promise: Promise<void>; resolve: () => void } = EngineHost.signal();

  /**
   * @param core - parsing and readouts (see `core-adapter.ts` for the real one).
   * @param post - where replies go.
   * @param options - tuning; defaults in {@link EngineHost.Options}.
   */
  constructor(core: EngineCore, post: ReplySink, options: EngineHost.Options = {}) {
    this.core = core;
    this.post = post;
    this.chunkMs = options.chunkMs ?? 50;
    this.findingsEveryMs = options.findingsEveryMs ?? 1000;
  }

  /**
   * Accepts one incoming message. `stop` acts at once; everything else runs in arrival order.
   *
   * @returns a promise that settles when this message has been handled (tests await it).
   */
  receive(message: unknown): Promise<void> {
    const problem = checkRequest(message);
    if (problem !== null) {
      const id = typeof (message as { id?: unknown })?.id === 'number' ? (message as { id: number }).id : -1;
      this.post({ id, kind: 'failed', message: `bad request: ${problem}` });
      return Promise.resolve();
    }
    const request = message as EngineRequest;
    if (request.kind === 'stop') {
      if (this.running === request.target) {
        this.stopFlag = true;
        this.stopSignal.resolve();
      }
      return Promise.resolve();
    }
    const done = this.queue.then(() => this.run(request));
    this.queue = done;
    return done;
  }

  private static signal(): { promise: Promise<void>; resolve: () => void } {
    let resolve: () => void = () => undefined;
    const promise = new Promise<void>(r => (resolve = r));
    return { promise, resolve };
  }

  private async run(request: Exclude<EngineRequest, { kind: 'stop' }>): Promise<void> {
    this.running = request.id;
    this.stopFlag = false;
    this.stopSignal = EngineHost.signal();
    try {
      await this.dispatch(request);
    } catch (error) {
      const message = error instanceof Error ? error.message : String(error);
      this.post({ id: request.id, kind: 'failed', message });
    } finally {
      this.running = null;
      this.stopFlag = false;
    }
  }

  private async dispatch(request: Exclude<EngineRequest, { kind: 'stop' }>): Promise<void> {
    const id = request.id;
    switch (request.kind) {
      case 'load':
        this.load(request);
        return;
      case 'step':
        return this.stepMany(id, request.n, null, request.sharpnessEvery ?? 0);
      case 'run-until':
        return this.stepMany(id, request.maxSteps, request.condition, 0);
      case 'reset': {
        const l = this.need();
        const e = l.cell.grove.experiment(l.cell.grove.root());
        this.loaded = { ...l, cell: CellGrove.fresh(this.core, l.cell.specText, e, l.checkpointEvery, l.cell.cellFiles) };
        this.post({ id, kind: 'rewound', ...this.view() });
        return;
      }
      case 'rewind':
        return this.rewind(id, request.step);
      case 'discard': {
        const dropped = this.need().cell.discard();
        this.post({ id, kind: 'branched', ...this.view(), dropped });
        return;
      }
      case 'fork': {
        const cell = this.need().cell;
        const out = cell.fork(request.from ?? cell.active, request.step, request.patch as SpecPatch, request.name, filesOf(request));
        if (!out.ok) this.post({ id, kind: 'patch-errors', errors: out.errors });
        else this.post({ id, kind: 'branched', ...this.view() });
        return;
      }
      case 'switch':
        this.need().cell.switchTo(request.branch);
        this.post({ id, kind: 'branched', ...this.view() });
        return;
      case 'rename':
        this.need().cell.rename(request.branch, request.to);
        this.post({ id, kind: 'branched', ...this.view() });
        return;
      case 'delete': {
        const removed = this.need().cell.remove(request.branch);
        this.post({ id, kind: 'branched', ...this.view(), removed });
        return;
      }
      case 'compare':
        this.post({ id, kind: 'comparison', ...this.need().cell.compare(request.branches, request.reference), batchOnly: batchOnlyComparison(this.need().cell, request.branches) });
        return;
      case 'gradcheck': {
        const cell = this.need().cell;
        const name = cell.active;
        const session = cell.grove.session(name);
        const audit = { step: session.stepCount, result: this.core.audit(cell.grove.experiment(name), session, request.sample) };
        cell.readoutsOf(name).audit = audit;
        cell.diagnose(name);
        this.post({ id, kind: 'audit', ...audit, readouts: cell.readoutsView(name) });
        return;
      }
      case 'noise': {
        const cell = this.need().cell;
        const name = cell.active;
        const result = this.core.noise(cell.grove.experiment(name), cell.grove.session(name), request.sample);
        cell.readoutsOf(name).noise = result;
        cell.diagnose(name);
        this.post({ id, kind: 'noise', result, readouts: cell.readoutsView(name) });
        return;
      }
      case 'curvature': {
        const cell = this.need().cell;
        const name = cell.active;
        // The top end goes out as soon as it has converged: on a large model it is most of what
        // the readout says (λmax against the limit) in a fraction of the time.
        const early = (partial: CurvatureResult): void => this.post({ id, kind: 'progress', done: 0, total: 0, records: [], curvature: partial });
        // Between Lanczos steps the loop gets a turn every chunk, so a Stop click can arrive.
        let since = performance.now();
        const pause = (): Promise<void> | undefined => {
          if (performance.now() - since < this.chunkMs) return undefined;
          return messageTurn().then(() => void (since = performance.now()));
        };
        const control = { shouldStop: () => this.stopFlag, stopped: this.stopSignal.promise, pause };
        let result: CurvatureResult | null = null;
        try {
          result = await this.core.curvature(cell.grove.experiment(name), cell.grove.session(name), request.k, request.denseLimit, early, control);
        } catch (error) {
          // Stopped before the first eigenvalue: nothing to show.
          if (!this.stopFlag) throw error;
        }
        if (result === null || result.stop === 'cancelled') {
          // A stopped readout is discarded whole, like a stopped deeper readout: the branch keeps its previous one.
          this.post({ id, kind: 'curvature', result: null, stopped: true, readouts: cell.readoutsView(name) });
          return;
        }
        cell.readoutsOf(name).curvature = result;
        cell.diagnose(name);
        this.post({ id, kind: 'curvature', result, stopped: false, readouts: cell.readoutsView(name) });
        return;
      }
      case 'snapshot': {
        const cell = this.need().cell;
        const g = cell.grove;
        this.post({ id, kind: 'snapshot', summary: cell.summary(), state: g.session(cell.active).state(), trajectory: g.trajectory(cell.active), checkpoints: cell.checkpointData() });
        return;
      }
      case 'verify':
        return this.verify(id, request.branches);
      case 'deeper':
        return this.deeper(id, request.request);
      case 'open':
        this.post({ id, kind: 'opened', result: viewLedger(request.ledger, request.limits) });
        return;
      case 'check': {
        // the live check reads no files (they are read when the engine starts)
        const parsed = parseSpec(request.specText, 'auto', { deferFiles: true, ...(request.limits === undefined ? {} : { limits: request.limits }) });
        this.post({ id, kind: 'checked', errors: parsed.ok ? [] : parsed.errors, files: cellFileNames(request.specText, request.chains ?? []) });
        return;
      }
      case 'ledger': {
        const cell = this.need().cell;
        const built = cell.ledger(request.specText, request.checkpointCap);
        if (request.maxBytes !== undefined && built.bytes > request.maxBytes) {
          // Refused before the page sees it: the session stays in the worker, the notebook keeps its previous ledger.
          this.post({ id, kind: 'failed', message: ledgerTooLarge(built.bytes, request.maxBytes) });
          return;
        }
        this.post({ id, kind: 'ledger', summary: cell.summary(), value: built.value, bytes: built.bytes, trajectory: cell.display() });
        return;
      }
    }
  }

  private need(): Loaded {
    if (this.loaded === null) throw new Error('no experiment loaded: send a load request first');
    return this.loaded;
  }

  /** Summary, display trajectory and readouts of the active branch. */
  private view(): { summary: ReturnType<CellGrove['summary']>; trajectory: StepRecord[]; readouts: ReturnType<CellGrove['readoutsOf']> } {
    const cell = this.need().cell;
    return { summary: cell.summary(), trajectory: cell.display(), readouts: cell.readoutsView() };
  }

  private load(request: Extract<EngineRequest, { kind: 'load' }>): void {
    const files = filesOf(request);
    const parsed = this.core.parse(request.specText, files, request.limits);
    if (!parsed.ok) {
      this.post({ id: request.id, kind: 'spec-errors', errors: parsed.errors });
      return;
    }
    let cell: CellGrove;
    try {
      cell =
        request.resume === undefined
          ? CellGrove.fresh(this.core, request.specText, parsed.experiment, request.checkpointEvery, files, request.limits)
          : CellGrove.fromLedger(this.core, request.specText, request.resume, request.checkpointEvery, files, request.limits);
    } catch (error) {
      if (!(error instanceof SpecProblemsError)) throw error;
      this.post({ id: request.id, kind: 'spec-errors', errors: error.problems });
      return;
    }
    this.loaded = { cell, checkpointEvery: request.checkpointEvery };
    this.post({ id: request.id, kind: 'ready', ...this.view(), warnings: parsed.warnings });
  }

  /**
   * Calls `slice` with hooks that end it after about `chunkMs` (at least one update each) or
   * on a stop request, posting progress and yielding between slices, until `slice` says it
   * is finished or a stop request arrived.
   *
   * @param progress - what the progress reply after a slice carries.
   * @returns 'stopped' when a stop request ended the work.
   */
  private async sliced(
    id: number,
    slice: (hooks: StepHooks) => boolean,
    progress: () => { done: number; total: number; records: StepRecord[]; sharpness?: SharpnessPoint[]; readouts?: BranchReadouts }
  ): Promise<'finished' | 'stopped'> {
    for (;;) {
      if (this.stopFlag) return 'stopped';
      const start = performance.now();
      let updates = 0;
      const hooks: StepHooks = {
        shouldStop: () => this.stopFlag || (updates > 0 && performance.now() - start >= this.chunkMs),
        onProgress: () => {
          updates += 1;
        }
      };
      if (slice(hooks)) return 'finished';
      if (this.stopFlag) return 'stopped';
      this.post({ id, kind: 'progress', ...progress() });
      await nextTick();
    }
  }

  private async stepMany(id: number, total: number, condition: StopCondition | null, sharpnessEvery: number): Promise<void> {
    const cell = this.need().cell;
    const grove = cell.grove;
    const name = cell.active;
    const session = grove.session(name);
    const experiment = grove.experiment(name);
    const readouts = cell.readoutsOf(name);
    // A plain step runs `total` updates; it still ends early when the loss becomes non-finite.
    const cond: StopCondition = condition ?? { kind: 'steps', count: total };
    const carry = { startLoss: cond.kind === 'diverged' ? session.fullLoss() : NaN, done: 0 };
    const points: SharpnessPoint[] = [];
    // Wall time of the updates alone: sharpness measurements and the yields between slices excluded.
    let elapsed = 0;
    let measuring = 0;
    const measure = (): void => {
      const t0 = performance.now();
      try {
        const p = this.core.sharpness(experiment, session);
        points.push(p);
        readouts.sharpness = [...readouts.sharpness.filter(q => q.step !== p.step), p].sort((a, b) => a.step - b.step);
      } catch {
        // Diverged weights make the products non-finite: the trace simply ends there.
      }
      measuring += performance.now() - t0;
    };
    if (sharpnessEvery > 0) measure();
    let pending: StepRecord[] = [];
    let reason: RunReason = 'max-steps';
    // Findings while a long run goes on: at most every `findingsEveryMs` of wall time, and never
    // more than a tenth of it (ten times the last evaluation's cost), so stepping keeps its pace.
    let lastDiagnosis = performance.now();
    let diagnosisMs = 0;
    const freshReadouts = (): BranchReadouts | undefined => {
      const now = performance.now();
      if (now - lastDiagnosis < Math.max(this.findingsEveryMs, 10 * diagnosisMs)) return undefined;
      cell.diagnose(name);
      const view = cell.readoutsView(name);
      lastDiagnosis = performance.now();
      diagnosisMs = lastDiagnosis - now;
      return view;
    };
    const end = await this.sliced(
      id,
      hooks => {
        const t0 = performance.now();
        const m0 = measuring;
        const res = grove.runUntil(name, cond, total - carry.done, {
          ...hooks,
          onRecord: r => {
            if (sharpnessEvery > 0 && r.step % sharpnessEvery === 0 && Number.isFinite(r.loss)) measure();
          }
        }, carry);
        elapsed += performance.now() - t0 - (measuring - m0);
        carry.done += res.records.length;
        for (const r of res.records) pending.push(r);
        reason = res.reason;
        return reason !== 'stopped';
      },
      () => {
        const records = sampleRecords(pending, REPLY_SAMPLE);
        pending = [];
        const readouts = freshReadouts();
        return { done: carry.done, total, records, sharpness: points.splice(0, points.length), ...(readouts === undefined ? {} : { readouts }) };
      }
    );
    const last = pending[pending.length - 1];
    const outcome: StepEnd = end === 'stopped' ? 'stopped' : stepEnd(reason, condition !== null, last);
    let nonFinite: { step: number; loss: number } | undefined;
    if (outcome === 'non-finite' && last !== undefined && last.step > 0) {
      // A non-finite state is never kept as the branch's tip (nor saved as its head): the branch
      // goes back to the last finite state, as `stepwell run` reports it, and says what happened.
      nonFinite = { step: last.step, loss: last.loss };
      grove.rewind(name, last.step - 1);
      if (grove.tip(name) > last.step - 1) cell.discard();
      pending = pending.filter(r => r.step < last.step);
    }
    cell.diagnose(name);
    this.post({
      id,
      kind: 'stepped',
      summary: cell.summary(),
      ...(nonFinite !== undefined ? { nonFinite } : {}),
      records: sampleRecords(pending, REPLY_SAMPLE),
      sharpness: points,
      stopped: outcome === 'stopped',
      reason: outcome,
      updates: carry.done,
      elapsedMs: elapsed,
      readouts: cell.readoutsView(name)
    });
  }

  /** Runs a grove task in slices; progress replies carry its (done, total). */
  private runTask<T>(id: number, task: GroveTask<T>): Promise<'finished' | 'stopped'> {
    return this.sliced(id, hooks => task.run(hooks), () => ({ done: task.done, total: task.total, records: [] }));
  }

  private async rewind(id: number, target: number): Promise<void> {
    const cell = this.need().cell;
    const name = cell.active;
    const tip = cell.grove.tip(name);
    if (target > tip) throw new Error(`cannot move branch '${name}' to step ${target}: its furthest step is ${tip}`);
    const end = await this.runTask(id, cell.grove.rewindTask(name, target));
    if (end === 'stopped') {
      this.post({ id, kind: 'failed', message: `rewind to step ${target} was stopped; the session is unchanged` });
      return;
    }
    cell.diagnose(name);
    this.post({ id, kind: 'rewound', ...this.view() });
  }

  /**
   * One deeper readout at the active branch's cursor, in slices with progress. A stopped readout
   * is discarded (the branch keeps its previous result of that kind), so what is kept is complete.
   */
  private async deeper(id: number, request: DeeperRequest): Promise<void> {
    const cell = this.need().cell;
    const name = cell.active;
    const session = cell.grove.session(name);
    const path = request.what === 'plane' ? planePath(cell.checkpointData(), session.stepCount, session.parameters) : undefined;
    const task = deeperTask(session, request, path);
    const end = await this.runTask(id, task);
    const done = end === 'stopped' ? (task.stop(), null) : task.result();
    const result = done === null ? null : thinDeeper(done);
    const readouts = cell.readoutsOf(name);
    if (result !== null) readouts.deeper = keepDeeper(readouts.deeper, result);
    this.post({ id, kind: 'deeper', result, stopped: end === 'stopped', readouts: cell.readoutsView(name) });
  }

  private async verify(id: number, names: string[] | undefined): Promise<void> {
    const cell = this.need().cell;
    const results: VerifyResult[] = [];
    for (const name of names !== undefined && names.length > 0 ? names : [cell.active]) {
      const grove = cell.grove;
      const steps = grove.tip(name);
      const task = grove.replayTask(name);
      if ((await this.runTask(id, task)) === 'stopped') {
        this.post({ id, kind: 'failed', message: `verify was stopped during a partial replay of branch '${name}'; ${results.length > 0 ? `${results.length} branch(es) before it were compared` : 'nothing was compared'}` });
        return;
      }
      const report = task.result();
      const expected = report.recordedFingerprint;
      const actual = report.replayedFingerprint;
      // Only bits count here: a replay within the grove's tolerance still differs.
      results.push(
        report.match === 'bit-identical'
          ? { branch: name, match: 'bit-identical', steps, expected, actual }
          : { branch: name, match: 'differs', steps, firstDifferingStep: report.firstDifferingStep ?? steps, expected, actual }
      );
    }
    this.post({ id, kind: 'verified', result: results[0], results });
  }
}

/** Options of {@link EngineHost}. */
export namespace EngineHost {
  /** Tuning of the host. */
  export interface Options {
    /** Milliseconds of work between progress messages and yields. Default 50. */
    chunkMs?: number;
    /**
     * Least milliseconds between re-evaluations of the findings while a long run goes on (each
     * also waits ten times the previous one's cost). Default 1000; the run's end always evaluates.
     */
    findingsEveryMs?: number;
  }
}

/** The protocol's reason for a finished run: the grove's reason, and whether the loss is still finite. */
/** The message of a ledger above the size limit (setting `maxLedgerBytes`). */
export function ledgerTooLarge(bytes: number, limit: number): string {
  return `the ledger would take ${grouped(bytes)} bytes, above the limit of ${grouped(limit)} (setting maxLedgerBytes); nothing is lost: the session stays in memory. Delete branches, lower the checkpoint cap, or raise the limit, then act again to save`;
}

function stepEnd(reason: RunReason, hasCondition: boolean, last: StepRecord | undefined): StepEnd {
  switch (reason) {
    case 'max-steps':
    case 'stopped':
      return 'done';
    case 'condition':
      return hasCondition ? 'condition' : 'done';
    case 'diverged':
      // Non-finite loss, or (run-until) the 'diverged' condition met / weights non-finite.
      return last !== undefined && Number.isFinite(last.loss) && hasCondition ? 'condition' : 'non-finite';
  }
}
