/**
 * The engine host: the worker's whole behaviour as a plain class. The worker entry only
 * forwards messages to {@link EngineHost.receive}; unit tests call it directly in Node.
 *
 * The session lives in a core {@link Grove} (one branch, `main`): stepping, checkpoints,
 * trajectory bounds, rewind and replay verdicts are the grove's. The host adds what only a
 * worker needs: requests in arrival order, time slices of about
 * {@link EngineHost.Options.chunkMs} milliseconds with a `progress` reply and a yield to the
 * event loop between them (so a `stop` request can arrive and be honoured between updates),
 * samples of records instead of whole trajectories, and the protocol's reply shapes.
 */
import type { Experiment } from '../core/setup';
import type { StepRecord } from '../core/state';
import { Grove, type GroveOptions, type GroveTask, type RunReason, type StepHooks } from '../core/session';
import type { EngineCore } from './engine-core';
import type { CheckpointData, EngineReply, EngineRequest, SessionSummary, SharpnessPoint, StopCondition, VerifyResult } from './protocol';
import { checkRequest } from './protocol';
import { describeRecipe, describeSetup } from './describe';
import { DISPLAY_RECORDS, MEMORY_CHECKPOINT_CAP, MEMORY_RECORD_CAP, RECENT_RECORDS, REPLY_SAMPLE, sampleRecords } from './sampling';
import { buildCellLedger, MAIN_BRANCH } from './ledger-build';

/** Something that can post replies (the worker's `self.postMessage`, or a test array). */
export type ReplySink = (reply: EngineReply) => void;

/** Why a stepping request ended (the protocol's `reason`). */
type StepEnd = 'done' | 'stopped' | 'condition' | 'non-finite';

/** The loaded experiment and its grove. */
interface Loaded {
  experiment: Experiment;
  grove: Grove;
  checkpointEvery: number;
}

const nextTick = (): Promise<void> => new Promise(resolve => setTimeout(resolve, 0));

/** Drives one session on behalf of one stepwell cell. */
export class EngineHost {
  private readonly core: EngineCore;
  private readonly post: ReplySink;
  private readonly chunkMs: number;
  private loaded: Loaded | null = null;
  private queue: Promise<void> = Promise.resolve();
  private running: number | null = null;
  private stopFlag = false;

  /**
   * @param core - parsing and readouts (see `core-adapter.ts` for the real one).
   * @param post - where replies go.
   * @param options - tuning; defaults in {@link EngineHost.Options}.
   */
  constructor(core: EngineCore, post: ReplySink, options: EngineHost.Options = {}) {
    this.core = core;
    this.post = post;
    this.chunkMs = options.chunkMs ?? 50;
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
      if (this.running === request.target) this.stopFlag = true;
      return Promise.resolve();
    }
    const done = this.queue.then(() => this.run(request));
    this.queue = done;
    return done;
  }

  private async run(request: Exclude<EngineRequest, { kind: 'stop' }>): Promise<void> {
    this.running = request.id;
    this.stopFlag = false;
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
        this.loaded = { ...l, grove: Grove.create(l.experiment, groveOptions(l.checkpointEvery), MAIN_BRANCH) };
        this.post({ id, kind: 'rewound', summary: this.summary(), trajectory: this.display() });
        return;
      }
      case 'rewind':
        return this.rewind(id, request.step);
      case 'gradcheck': {
        const l = this.need();
        const session = l.grove.session(MAIN_BRANCH);
        this.post({ id, kind: 'audit', step: session.stepCount, result: this.core.audit(l.experiment, session, request.sample) });
        return;
      }
      case 'curvature': {
        const l = this.need();
        this.post({ id, kind: 'curvature', result: await this.core.curvature(l.experiment, l.grove.session(MAIN_BRANCH), request.k, request.denseLimit) });
        return;
      }
      case 'snapshot': {
        const g = this.need().grove;
        this.post({ id, kind: 'snapshot', summary: this.summary(), state: g.session(MAIN_BRANCH).state(), trajectory: g.trajectory(MAIN_BRANCH), checkpoints: checkpointData(g) });
        return;
      }
      case 'verify':
        return this.verify(id);
      case 'ledger': {
        const l = this.need();
        const session = l.grove.session(MAIN_BRANCH);
        const trajectory = l.grove.trajectory(MAIN_BRANCH);
        const built = buildCellLedger({
          specText: request.specText,
          experiment: l.experiment,
          parameterCount: session.objective.parameterCount,
          head: session.state(),
          trajectory,
          checkpoints: checkpointData(l.grove),
          checkpointCap: request.checkpointCap
        });
        this.post({ id, kind: 'ledger', summary: this.summary(), value: built.value, bytes: built.bytes, trajectory: sampleRecords(trajectory, DISPLAY_RECORDS) });
        return;
      }
    }
  }

  private need(): Loaded {
    if (this.loaded === null) throw new Error('no experiment loaded: send a load request first');
    return this.loaded;
  }

  private load(request: Extract<EngineRequest, { kind: 'load' }>): void {
    const parsed = this.core.parse(request.specText);
    if (!parsed.ok) {
      this.post({ id: request.id, kind: 'spec-errors', errors: parsed.errors });
      return;
    }
    const opts = groveOptions(request.checkpointEvery);
    const grove = request.resume === undefined ? Grove.create(parsed.experiment, opts, MAIN_BRANCH) : Grove.resume(parsed.experiment, request.resume, opts, MAIN_BRANCH);
    this.loaded = { experiment: parsed.experiment, grove, checkpointEvery: request.checkpointEvery };
    this.post({ id: request.id, kind: 'ready', summary: this.summary(), trajectory: this.display(), warnings: parsed.warnings });
  }

  private summary(): SessionSummary {
    const l = this.need();
    const session = l.grove.session(MAIN_BRANCH);
    return {
      step: session.stepCount,
      fingerprint: session.fingerprint(),
      parameterCount: session.objective.parameterCount,
      checkpointSteps: l.grove.checkpointSteps(MAIN_BRANCH),
      recipe: describeRecipe(l.experiment.recipe),
      setup: describeSetup(l.experiment.setup)
    };
  }

  /** An even sample of the trajectory for display. */
  private display(): StepRecord[] {
    return sampleRecords(this.need().grove.trajectory(MAIN_BRANCH), DISPLAY_RECORDS);
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
    progress: () => { done: number; total: number; records: StepRecord[]; sharpness?: SharpnessPoint[] }
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
    const l = this.need();
    const grove = l.grove;
    const session = grove.session(MAIN_BRANCH);
    // A plain step runs `total` updates; it still ends early when the loss becomes non-finite.
    const cond: StopCondition = condition ?? { kind: 'steps', count: total };
    const carry = { startLoss: cond.kind === 'diverged' ? session.fullLoss() : NaN, done: 0 };
    const points: SharpnessPoint[] = [];
    const measure = (): void => {
      try {
        points.push(this.core.sharpness(l.experiment, session));
      } catch {
        // Diverged weights make the products non-finite: the trace simply ends there.
      }
    };
    if (sharpnessEvery > 0) measure();
    let pending: StepRecord[] = [];
    let reason: RunReason = 'max-steps';
    const end = await this.sliced(
      id,
      hooks => {
        const res = grove.runUntil(MAIN_BRANCH, cond, total - carry.done, {
          ...hooks,
          onRecord: r => {
            if (sharpnessEvery > 0 && r.step % sharpnessEvery === 0 && Number.isFinite(r.loss)) measure();
          }
        }, carry);
        carry.done += res.records.length;
        for (const r of res.records) pending.push(r);
        reason = res.reason;
        return reason !== 'stopped';
      },
      () => {
        const records = sampleRecords(pending, REPLY_SAMPLE);
        pending = [];
        return { done: carry.done, total, records, sharpness: points.splice(0, points.length) };
      }
    );
    const last = pending[pending.length - 1];
    const outcome: StepEnd = end === 'stopped' ? 'stopped' : stepEnd(reason, condition !== null, last);
    this.post({
      id,
      kind: 'stepped',
      summary: this.summary(),
      records: sampleRecords(pending, REPLY_SAMPLE),
      sharpness: points,
      stopped: outcome === 'stopped',
      reason: outcome
    });
  }

  /** Runs a grove task in slices; progress replies carry its (done, total). */
  private runTask<T>(id: number, task: GroveTask<T>): Promise<'finished' | 'stopped'> {
    return this.sliced(id, hooks => task.run(hooks), () => ({ done: task.done, total: task.total, records: [] }));
  }

  private async rewind(id: number, target: number): Promise<void> {
    const grove = this.need().grove;
    const at = grove.session(MAIN_BRANCH).stepCount;
    if (target > at) throw new Error(`cannot rewind to step ${target}: the session is at step ${at}`);
    const end = await this.runTask(id, grove.rewindTask(MAIN_BRANCH, target));
    if (end === 'stopped') {
      this.post({ id, kind: 'failed', message: `rewind to step ${target} was stopped; the session is unchanged` });
      return;
    }
    this.post({ id, kind: 'rewound', summary: this.summary(), trajectory: this.display() });
  }

  private async verify(id: number): Promise<void> {
    const grove = this.need().grove;
    const steps = grove.session(MAIN_BRANCH).stepCount;
    const task = grove.replayTask(MAIN_BRANCH);
    if ((await this.runTask(id, task)) === 'stopped') {
      this.post({ id, kind: 'failed', message: `verify was stopped after a partial replay; nothing was compared` });
      return;
    }
    const report = task.result();
    const expected = report.recordedFingerprint;
    const actual = report.replayedFingerprint;
    // Only bits count here: a replay within the grove's tolerance still differs.
    const result: VerifyResult =
      report.match === 'bit-identical'
        ? { match: 'bit-identical', steps, expected, actual }
        : { match: 'differs', steps, firstDifferingStep: report.firstDifferingStep ?? steps, expected, actual };
    this.post({ id, kind: 'verified', result });
  }
}

/** Options of {@link EngineHost}. */
export namespace EngineHost {
  /** Tuning of the host. */
  export interface Options {
    /** Milliseconds of work between progress messages and yields. Default 50. */
    chunkMs?: number;
  }
}

/** The grove options the host uses: the cell's checkpoint spacing, the worker's memory bounds. */
function groveOptions(checkpointEvery: number): GroveOptions {
  return { checkpointEvery, maxAutomatic: MEMORY_CHECKPOINT_CAP, maxRecords: MEMORY_RECORD_CAP, recentRecords: RECENT_RECORDS };
}

/** The branch's checkpoints as protocol data. */
function checkpointData(grove: Grove): CheckpointData[] {
  return grove.checkpoints(MAIN_BRANCH).map(c => ({ step: c.step, fingerprint: c.fingerprint, state: c.state }));
}

/** The protocol's reason for a finished run: the grove's reason, and whether the loss is still finite. */
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
