/**
 * The engine host: the worker's whole behaviour as a plain class. The worker entry only
 * forwards messages to {@link EngineHost.receive}; unit tests call it directly in Node.
 *
 * Long work (step, run-until, verify, rewind replays) runs in chunks of about
 * {@link EngineHost.Options.chunkMs} milliseconds; between chunks the host posts a
 * `progress` reply and yields to the event loop, so a `stop` request can arrive and set
 * the flag that the loop checks before every update.
 */
import type { Experiment } from '../core/setup';
import type { StepRecord } from '../core/state';
import type { EngineCore, EngineSession } from './engine-core';
import type {
  CheckpointData,
  EngineReply,
  EngineRequest,
  SessionSummary,
  SharpnessPoint,
  StopCondition,
  VerifyResult
} from './protocol';
import { checkRequest } from './protocol';
import { evaluateStop } from '../core/session/stop';
import { describeRecipe, describeSetup } from './describe';
import { DISPLAY_RECORDS, MEMORY_CHECKPOINT_CAP, REPLY_SAMPLE, sampleRecords, thinInPlace } from './thin';
import { buildCellLedger } from './ledger-build';
import { thinCheckpoints } from '../ledger/thin';

/** Something that can post replies (the worker's `self.postMessage`, or a test array). */
export type ReplySink = (reply: EngineReply) => void;

/** Why a loop ended. */
type LoopEnd = 'done' | 'stopped' | 'condition' | 'non-finite';

/** The loaded experiment and its live session. */
interface Loaded {
  experiment: Experiment;
  session: EngineSession;
  trajectory: StepRecord[];
  checkpoints: CheckpointData[];
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
  /** Extra fields of the next progress reply (the running request's measurements). */
  private progressExtras: () => { sharpness?: SharpnessPoint[] } = () => ({});

  /**
   * @param core - the numerics (see `core-adapter.ts` for the real one).
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
      this.progressExtras = () => ({});
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
        this.loaded = this.fresh(l.experiment, l.checkpointEvery);
        this.post({ id, kind: 'rewound', summary: this.summary(), trajectory: sampleRecords(this.loaded.trajectory, DISPLAY_RECORDS) });
        return;
      }
      case 'rewind':
        return this.rewind(id, request.step);
      case 'gradcheck': {
        const l = this.need();
        const result = this.core.audit(l.experiment, l.session, request.sample);
        this.post({ id, kind: 'audit', step: l.session.stepCount, result });
        return;
      }
      case 'curvature': {
        const l = this.need();
        this.post({ id, kind: 'curvature', result: this.core.curvature(l.experiment, l.session, request.k, request.denseLimit) });
        return;
      }
      case 'snapshot': {
        const l = this.need();
        this.post({
          id,
          kind: 'snapshot',
          summary: this.summary(),
          state: l.session.state(),
          trajectory: l.trajectory.slice(),
          checkpoints: l.checkpoints.slice()
        });
        return;
      }
      case 'verify':
        return this.verify(id);
      case 'ledger': {
        const l = this.need();
        const built = buildCellLedger({
          specText: request.specText,
          experiment: l.experiment,
          parameterCount: l.session.parameterCount,
          head: l.session.state(),
          trajectory: l.trajectory,
          checkpoints: l.checkpoints,
          checkpointCap: request.checkpointCap
        });
        this.post({ id, kind: 'ledger', summary: this.summary(), value: built.value, bytes: built.bytes, trajectory: sampleRecords(l.trajectory, DISPLAY_RECORDS) });
        return;
      }
    }
  }

  private need(): Loaded {
    if (this.loaded === null) throw new Error('no experiment loaded: send a load request first');
    return this.loaded;
  }

  private fresh(experiment: Experiment, checkpointEvery: number): Loaded {
    const session = this.core.create(experiment);
    return {
      experiment,
      session,
      trajectory: [session.initialRecord()],
      checkpoints: [{ step: 0, fingerprint: session.fingerprint(), state: session.state() }],
      checkpointEvery
    };
  }

  private load(request: Extract<EngineRequest, { kind: 'load' }>): void {
    const parsed = this.core.parse(request.specText);
    if (!parsed.ok) {
      this.post({ id: request.id, kind: 'spec-errors', errors: parsed.errors });
      return;
    }
    const resume = request.resume;
    if (resume === undefined) {
      this.loaded = this.fresh(parsed.experiment, request.checkpointEvery);
    } else {
      const last = resume.trajectory[resume.trajectory.length - 1];
      if (last === undefined || last.step !== resume.state.step) {
        throw new Error(
          `saved trajectory ends at step ${last?.step ?? 'none'} but the saved state is at step ${resume.state.step}`
        );
      }
      const session = this.core.restore(parsed.experiment, resume.state);
      this.loaded = {
        experiment: parsed.experiment,
        session,
        trajectory: resume.trajectory.slice(),
        checkpoints: resume.checkpoints.slice().sort((a, b) => a.step - b.step),
        checkpointEvery: request.checkpointEvery
      };
    }
    this.post({
      id: request.id,
      kind: 'ready',
      summary: this.summary(),
      trajectory: sampleRecords(this.loaded.trajectory, DISPLAY_RECORDS),
      warnings: parsed.warnings
    });
  }

  private summary(): SessionSummary {
    const l = this.need();
    return {
      step: l.session.stepCount,
      fingerprint: l.session.fingerprint(),
      parameterCount: l.session.parameterCount,
      checkpointSteps: l.checkpoints.map(c => c.step),
      recipe: describeRecipe(l.experiment.recipe),
      setup: describeSetup(l.experiment.setup)
    };
  }

  /**
   * Runs `body` up to `total` times in time-sliced chunks, posting progress between chunks.
   * `body` returns a record to report, or a loop end to finish early.
   */
  private async sliced(
    id: number,
    total: number,
    body: (i: number) => StepRecord | LoopEnd
  ): Promise<{ end: LoopEnd; pending: StepRecord[] }> {
    let pending: StepRecord[] = [];
    let chunkStart = performance.now();
    for (let i = 0; i < total; i++) {
      if (this.stopFlag) return { end: 'stopped', pending };
      const out = body(i);
      if (typeof out === 'string') return { end: out, pending };
      pending.push(out);
      if (performance.now() - chunkStart >= this.chunkMs && i + 1 < total) {
        this.post({ id, kind: 'progress', done: i + 1, total, records: sampleRecords(pending, REPLY_SAMPLE), ...this.progressExtras() });
        pending = [];
        await nextTick();
        chunkStart = performance.now();
      }
    }
    return { end: 'done', pending };
  }

  private checkpointIfDue(l: Loaded): void {
    const step = l.session.stepCount;
    if (l.checkpointEvery > 0 && step % l.checkpointEvery === 0) {
      l.checkpoints.push({ step, fingerprint: l.session.fingerprint(), state: l.session.state() });
      // A long run would pile up states; thin them with the ledger's policy (dense near the head).
      if (l.checkpoints.length > 2 * MEMORY_CHECKPOINT_CAP) {
        const keep = new Set(thinCheckpoints(l.checkpoints.map(c => c.step), MEMORY_CHECKPOINT_CAP));
        l.checkpoints = l.checkpoints.filter(c => keep.has(c.step));
      }
    }
  }

  private async stepMany(id: number, total: number, condition: StopCondition | null, sharpnessEvery: number): Promise<void> {
    const l = this.need();
    const startLoss = l.trajectory[l.trajectory.length - 1]?.loss ?? NaN;
    const points: SharpnessPoint[] = [];
    const measure = (): void => {
      try {
        points.push(this.core.sharpness(l.experiment, l.session));
      } catch {
        // Diverged weights make the products non-finite: the trace simply ends there.
      }
    };
    if (sharpnessEvery > 0) measure();
    this.progressExtras = () => ({ sharpness: points.splice(0, points.length) });
    const { end, pending } = await this.sliced(id, total, i => {
      const record = l.session.stepOnce();
      l.trajectory.push(record);
      thinInPlace(l.trajectory);
      this.checkpointIfDue(l);
      if (sharpnessEvery > 0 && l.session.stepCount % sharpnessEvery === 0 && Number.isFinite(record.loss)) measure();
      if (!Number.isFinite(record.loss)) return 'non-finite';
      if (condition !== null && evaluateStop(condition, record, i + 1, startLoss, l.session.parameters) !== null) {
        return Number.isFinite(record.loss) ? 'condition' : 'non-finite';
      }
      return record;
    });
    // The record that ended the loop early is already in the trajectory; report it too.
    const tail = end === 'non-finite' || end === 'condition' ? [l.trajectory[l.trajectory.length - 1]] : [];
    this.post({
      id,
      kind: 'stepped',
      summary: this.summary(),
      records: sampleRecords(pending.concat(tail), REPLY_SAMPLE),
      sharpness: points,
      stopped: end === 'stopped',
      reason: end
    });
  }

  private async rewind(id: number, target: number): Promise<void> {
    const l = this.need();
    if (target > l.session.stepCount) {
      throw new Error(`cannot rewind to step ${target}: the session is at step ${l.session.stepCount}`);
    }
    let base: CheckpointData | undefined;
    for (const c of l.checkpoints) if (c.step <= target && (base === undefined || c.step > base.step)) base = c;
    if (base === undefined) throw new Error(`no checkpoint at or before step ${target}`);
    const session = this.core.restore(l.experiment, base.state);
    const { end } = await this.sliced(id, target - base.step, () => session.stepOnce());
    if (end === 'stopped') {
      this.post({ id, kind: 'failed', message: `rewind to step ${target} was stopped; the session is unchanged` });
      return;
    }
    l.session = session;
    l.trajectory = l.trajectory.filter(r => r.step <= target);
    l.checkpoints = l.checkpoints.filter(c => c.step <= target);
    this.post({ id, kind: 'rewound', summary: this.summary(), trajectory: sampleRecords(l.trajectory, DISPLAY_RECORDS) });
  }

  private async verify(id: number): Promise<void> {
    const l = this.need();
    const steps = l.session.stepCount;
    const replay = this.core.create(l.experiment);
    const byStep = new Map<number, StepRecord>();
    for (const r of l.trajectory) byStep.set(r.step, r);
    const cps = new Map<number, string>();
    for (const c of l.checkpoints) cps.set(c.step, c.fingerprint);
    let firstDiff: number | undefined;
    const check = (record: StepRecord): void => {
      const saved = byStep.get(record.step);
      const cp = cps.get(record.step);
      const recordDiffers = saved !== undefined && !sameRecord(saved, record);
      const cpDiffers = cp !== undefined && cp !== replay.fingerprint();
      if (firstDiff === undefined && (recordDiffers || cpDiffers)) firstDiff = record.step;
    };
    check(replay.initialRecord());
    const { end } = await this.sliced(id, steps, () => {
      const record = replay.stepOnce();
      check(record);
      return record;
    });
    if (end === 'stopped') {
      this.post({ id, kind: 'failed', message: `verify was stopped after a partial replay; nothing was compared` });
      return;
    }
    const expected = l.session.fingerprint();
    const actual = replay.fingerprint();
    if (firstDiff === undefined && expected !== actual) firstDiff = steps;
    const result: VerifyResult =
      firstDiff === undefined
        ? { match: 'bit-identical', steps, expected, actual }
        : { match: 'differs', steps, firstDifferingStep: firstDiff, expected, actual };
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

/** Bitwise equality of the deterministic fields of two step records (wall time excluded). */
export function sameRecord(a: StepRecord, b: StepRecord): boolean {
  return (
    a.step === b.step &&
    Object.is(a.loss, b.loss) &&
    Object.is(a.gradNorm, b.gradNorm) &&
    Object.is(a.updateNorm, b.updateNorm) &&
    Object.is(a.lr, b.lr)
  );
}
