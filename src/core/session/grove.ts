/**
 * A grove: the named branches of one experiment. Each branch owns a live {@link Session}, its
 * trajectory (step records from record 0), and its checkpoints; nothing is shared between
 * branches (every state handed in or out is a deep copy).
 *
 * Checkpoints (trade term): the initial state of a branch, automatic ones every k steps, and
 * manual ones on request, thinned by doubling k past `maxAutomatic` (see `grove-book.ts`), so
 * memory stays bounded and checkpoints stay evenly spread over a long run. The trajectory is
 * bounded too (see {@link boundTrajectory}): past `maxRecords` the far past is thinned, keeping
 * record 0, the newest records and the records at checkpoint steps.
 *
 * Cursor and tip: a branch's session sits at its cursor; the tip is the furthest step it
 * reached. {@link Grove.rewind} moves the cursor to any step from the branch's first checkpoint
 * to its tip *without dropping anything*: stepping on with the same recipe re-steps through the
 * kept steps (compared bit for bit) until the tip; {@link Grove.discard} drops the kept steps
 * explicitly. Going back and stepping on with a different recipe is a new branch
 * ({@link Grove.fork}).
 *
 * Rewind and replay can take many updates; {@link Grove.rewindTask} and {@link Grove.replayTask}
 * return them as {@link GroveTask}s that run in slices (the synchronous methods run them whole).
 *
 * Branching at step s of branch A with a changed recipe: the state of A at s (rebuilt from A's
 * checkpoints without disturbing A) is carried over to the new recipe by
 * {@link adaptSessionState}: optimizer state re-initialized when the optimizer kind changes,
 * kept where compatible otherwise; weights, step count and batch generator kept. A branch that
 * changes the setup or the seed (a new init scheme, standardized data) can only fork at step 0,
 * and starts afresh there from its own setup and seed ("restart").
 */
import type { Experiment, Recipe } from '../setup';
import type { SessionState, StepRecord } from '../state';
import { adaptSessionState } from './adapt';
import { Session, type RunCarry, type SessionParts, type StepHooks } from './live';
import { copySessionState, fingerprintState } from './state-data';
import type { StopCondition } from './stop';
import { compareReplay, type ReplayReport } from './replay';
import { planReplay, type ReplayLink } from './replay-legs';
import { LegTask, runToEnd, type GroveTask, type Leg } from './task';
import { checkTrajectoryBound, indexOfStep, recordsUpTo, type TrajectoryBound } from './trajectory';
import { branchNameProblem, copyCheckpoint, copyExperiment, copyOrigin, copyRecord, sameSetup, type Branch, type BranchOrigin, type BranchPatch, type Checkpoint, type GroveOptions, type GroveSnapshot, type ResumeData } from './grove-data';
import { afterUpdate, dropAfter, insertCheckpoint, insertRecord, tipStep } from './grove-book';
import { copyPlain } from '../plain';

export type { Checkpoint, GroveOptions, BranchOrigin, BranchPatch, BranchSnapshot, GroveSnapshot, ResumeData } from './grove-data';

/** A session re-stepped to a step, with the record of that step when the re-stepping made it. */
interface Reached {
  session: Session;
  record: StepRecord | null;
}

/** The branches of one experiment (see the module comment). */
export class Grove {
  private readonly branches = new Map<string, Branch>();
  private readonly every: number;
  private readonly maxAutomatic: number;
  private readonly tolerance: number;
  private readonly bound: TrajectoryBound;
  private readonly parts: ((experiment: Experiment) => SessionParts) | undefined;

  private constructor(opts: GroveOptions) {
    this.every = opts.checkpointEvery ?? 10;
    this.maxAutomatic = opts.maxAutomatic ?? 32;
    this.tolerance = opts.tolerance ?? 1e-9;
    const maxRecords = opts.maxRecords ?? 20000;
    this.bound = { maxRecords, recentRecords: opts.recentRecords ?? Math.max(1, Math.floor(maxRecords / 10)) };
    this.parts = opts.parts;
    if (!Number.isInteger(this.every) || this.every < 0) throw new Error(`checkpointEvery must be a non-negative integer, got ${this.every}`);
    if (!Number.isInteger(this.maxAutomatic) || this.maxAutomatic < 2) throw new Error(`maxAutomatic must be an integer ≥ 2, got ${this.maxAutomatic}`);
    checkTrajectoryBound(this.bound);
  }

  /** A grove with one branch, `root` (default name 'main'), at step 0 of `experiment`. */
  static create(experiment: Experiment, opts: GroveOptions = {}, root = 'main'): Grove {
    const g = new Grove(opts);
    const session = g.newSession(experiment, null);
    g.branches.set(root, { name: root, experiment, origin: null, session, trajectory: [session.initialRecord()], checkpoints: [], every: g.every, tip: null });
    g.addCheckpoint(g.get(root), false);
    return g;
  }

  /**
   * A grove with one root branch continuing `data` (e.g. a branch decoded from a ledger): the
   * head state goes on bit for bit; the saved checkpoints (the head included, added when
   * missing) serve rewind; replays still start from spec and seed.
   *
   * @throws when the trajectory does not end at the head's step or a checkpoint lies after it.
   */
  static resume(experiment: Experiment, data: ResumeData, opts: GroveOptions = {}, root = 'main'): Grove {
    const head = data.state.step;
    const last = data.trajectory[data.trajectory.length - 1];
    if (last === undefined || last.step !== head) {
      throw new Error(`saved trajectory ends at step ${last?.step ?? 'none'} but the saved state is at step ${head}`);
    }
    const byStep = new Map<number, Checkpoint>();
    for (const c of data.checkpoints) {
      if (c.step > head) throw new Error(`a saved checkpoint is at step ${c.step}, after the saved state (step ${head})`);
      if (!byStep.has(c.step)) byStep.set(c.step, { step: c.step, fingerprint: c.fingerprint, state: c.state, manual: false });
    }
    if (!byStep.has(head)) byStep.set(head, { step: head, fingerprint: fingerprintState(data.state), state: data.state, manual: false });
    const checkpoints = [...byStep.values()].sort((a, b) => a.step - b.step);
    return Grove.restore({ branches: [{ name: root, experiment, origin: null, trajectory: [...data.trajectory], checkpoints, every: opts.checkpointEvery ?? 10, current: data.state }] }, opts);
  }

  /**
   * Plain data for the ledger: every branch with its recipe, origin, trajectory, checkpoints
   * and current state (deep copies; the setup, with its data arrays, is shared read-only).
   */
  snapshot(): GroveSnapshot {
    return {
      branches: [...this.branches.values()].map((b) => ({
        name: b.name,
        experiment: copyExperiment(b.experiment),
        origin: copyOrigin(b.origin),
        trajectory: b.trajectory.map(copyRecord),
        checkpoints: b.checkpoints.map(copyCheckpoint),
        every: b.every,
        current: b.session.state(),
        tip: b.tip === null ? null : copyState(b.tip)
      }))
    };
  }

  /** Rebuilds a grove from {@link Grove.snapshot} data (each branch continues bit for bit). */
  static restore(snap: GroveSnapshot, opts: GroveOptions = {}): Grove {
    const g = new Grove(opts);
    if (snap.branches.length === 0) throw new Error('a grove snapshot needs at least one branch');
    for (const b of snap.branches) {
      if (g.branches.has(b.name)) throw new Error(`the snapshot names branch '${b.name}' twice`);
      if (b.origin !== null && !g.branches.has(b.origin.parent)) throw new Error(`branch '${b.name}' names parent '${b.origin.parent}', which does not come before it in the snapshot`);
      if (b.checkpoints.length === 0) throw new Error(`branch '${b.name}' has no checkpoint (its first state is needed for rewind and replay)`);
      const t = b.trajectory;
      const tip = b.tip ?? null;
      const end = tip?.step ?? b.current.step;
      if (t.length === 0 || t[t.length - 1].step !== end) {
        throw new Error(`branch '${b.name}' has a trajectory ending at step ${t[t.length - 1]?.step ?? 'none'} for its ${tip ? 'tip' : 'state'} at step ${end} (expected the same step)`);
      }
      if (tip !== null && !(b.current.step < tip.step)) throw new Error(`branch '${b.name}' has its cursor at step ${b.current.step}, not before its tip (step ${tip.step})`);
      for (let i = 1; i < t.length; i++) if (!(t[i].step > t[i - 1].step)) throw new Error(`branch '${b.name}' has trajectory records out of step order (step ${t[i].step} after ${t[i - 1].step})`);
      g.branches.set(b.name, {
        name: b.name,
        experiment: copyExperiment(b.experiment),
        origin: copyOrigin(b.origin),
        session: g.newSession(b.experiment, b.current),
        trajectory: t.map(copyRecord),
        checkpoints: b.checkpoints.map(copyCheckpoint).sort((x, y) => x.step - y.step),
        every: b.every,
        tip: tip === null ? null : copyState(tip)
      });
    }
    return g;
  }

  /** Branch names in creation order (a parent always before its children). */
  names(): string[] {
    return [...this.branches.keys()];
  }

  /** Name of the root branch (the experiment as the spec states it). */
  root(): string {
    for (const b of this.branches.values()) if (b.origin === null) return b.name;
    throw new Error('the grove has no root branch');
  }

  /** True when a branch of that name exists. */
  has(name: string): boolean {
    return this.branches.has(name);
  }

  /** The branches forked from `name` directly, in creation order. */
  children(name: string): string[] {
    this.get(name);
    return [...this.branches.values()].filter((b) => b.origin?.parent === name).map((b) => b.name);
  }

  /** The furthest step a branch reached (its cursor, unless steps are kept ahead of it after a rewind). */
  tip(name: string): number {
    return tipStep(this.get(name));
  }

  /** The experiment (with its recipe) a branch runs. */
  experiment(name: string): Experiment {
    return copyExperiment(this.get(name).experiment);
  }

  /** Where a branch was forked from (null for the root). */
  origin(name: string): BranchOrigin | null {
    return copyOrigin(this.get(name).origin);
  }

  /** The live session of a branch (stepping it directly bypasses trajectory and checkpoints). */
  session(name: string): Session {
    return this.get(name).session;
  }

  /** A copy of the branch's trajectory, record 0 first (thinned past `maxRecords`). */
  trajectory(name: string): StepRecord[] {
    return this.get(name).trajectory.map(copyRecord);
  }

  /** Copies of the branch's checkpoints, in step order (the tip's state is not among them unless saved). */
  checkpoints(name: string): Checkpoint[] {
    return this.get(name).checkpoints.map(copyCheckpoint);
  }

  /** Steps of the branch's checkpoints, ascending. */
  checkpointSteps(name: string): number[] {
    return this.get(name).checkpoints.map((c) => c.step);
  }

  /** Steps a branch n times, recording the trajectory and automatic checkpoints. */
  step(name: string, n = 1, hooks?: StepHooks): StepRecord[] {
    const b = this.get(name);
    return b.session.step(n, this.recording(b, hooks)).map(copyRecord);
  }

  /**
   * {@link Session.runUntil} on a branch, recording trajectory and checkpoints; `carry`
   * continues a run done in several calls (see {@link RunCarry}).
   */
  runUntil(name: string, cond: StopCondition, maxSteps: number, hooks?: StepHooks, carry?: RunCarry): ReturnType<Session['runUntil']> {
    const b = this.get(name);
    const res = b.session.runUntil(cond, maxSteps, this.recording(b, hooks), carry);
    return { records: res.records.map(copyRecord), reason: res.reason };
  }

  /** Saves a manual checkpoint of the branch's current state and returns a copy of it. */
  checkpoint(name: string): Checkpoint {
    return copyCheckpoint(this.addCheckpoint(this.get(name), true));
  }

  /** The state at the branch's tip (a copy). */
  tipState(name: string): SessionState {
    const b = this.get(name);
    return b.tip === null ? b.session.state() : copyState(b.tip);
  }

  /** The state of a branch at `step` (≤ its tip), without changing the branch. */
  stateAt(name: string, step: number): SessionState {
    return runToEnd(this.reach(this.get(name), step)).session.state();
  }

  /**
   * Moves a branch's cursor to `step` (any step from its first checkpoint to its tip): restores
   * the nearest saved state at or before it and re-steps to exactly `step`. Nothing is dropped:
   * the steps after `step` stay until {@link Grove.discard} (see the module comment).
   */
  rewind(name: string, step: number): Session {
    return runToEnd(this.rewindTask(name, step));
  }

  /**
   * Drops the steps a branch keeps after its cursor (records, checkpoints and the tip state).
   *
   * @returns how many kept steps were dropped (0 when the cursor is at the tip).
   * @throws when a branch forks from one of those steps (delete it first).
   */
  discard(name: string): number {
    const b = this.get(name);
    const at = b.session.stepCount;
    const tip = tipStep(b);
    if (tip === at) return 0;
    const later = [...this.branches.values()].filter((c) => c.origin?.parent === name && c.origin.step > at);
    if (later.length > 0) {
      throw new Error(`branch${later.length > 1 ? 'es' : ''} ${later.map((c) => `'${c.name}' (from step ${c.origin?.step})`).join(', ')} fork${later.length > 1 ? '' : 's'} from the steps after step ${at} of '${name}': delete ${later.length > 1 ? 'them' : 'it'} first`);
    }
    dropAfter(b, at);
    return tip - at;
  }

  /**
   * Deletes a branch and every branch forked from it (directly or not). The root cannot be
   * deleted: it is the experiment the spec states, and every other branch is a patch on it.
   *
   * @returns the deleted names, the branch first.
   */
  remove(name: string): string[] {
    const b = this.get(name);
    if (b.origin === null) throw new Error(`'${name}' is the root branch (the spec's own recipe): it cannot be deleted; Reset starts the whole cell over`);
    const gone = [name];
    for (const n of this.names()) {
      const o = this.branches.get(n)?.origin;
      if (o && gone.includes(o.parent) && !gone.includes(n)) gone.push(n);
    }
    for (const n of gone) this.branches.delete(n);
    return gone;
  }

  /** Renames a branch (its children follow); the order of branches is kept. */
  rename(name: string, to: string): void {
    this.get(name);
    if (to === name) return;
    const problem = branchNameProblem(to);
    if (problem !== null) throw new Error(problem);
    if (this.branches.has(to)) throw new Error(`a branch named '${to}' already exists`);
    const entries = [...this.branches.entries()];
    this.branches.clear();
    for (const [n, b] of entries) {
      if (n === name) b.name = to;
      if (b.origin?.parent === name) b.origin.parent = to;
      this.branches.set(b.name, b);
    }
  }

  /**
   * {@link Grove.rewind} as a task run in slices. The branch changes only when the task
   * finishes; a task left unfinished leaves the branch as it was.
   *
   * @throws (from `run`, at the end) when the branch was stepped or rewound meanwhile.
   */
  rewindTask(name: string, step: number): GroveTask<Session> {
    const b = this.get(name);
    const live = b.session;
    const at = live.stepCount;
    return this.reach(b, step, (reached) => {
      if (b.session !== live || live.stepCount !== at || this.branches.get(b.name) !== b) throw new Error(`branch '${name}' changed while the rewind to step ${step} ran; nothing was rewound`);
      const tip = tipStep(b);
      if (b.tip === null && at === tip && step < tip) b.tip = live.state();
      b.session = reached.session;
      if (step === tip) b.tip = null;
      if (reached.record !== null) insertRecord(b, reached.record);
      return reached.session;
    });
  }

  /**
   * A new branch `name` forked from `from` at `step` with `patch` merged into the recipe
   * (a shorthand for {@link Grove.fork} with the parent's seed and setup).
   */
  branch(from: string, step: number, name: string, patch: Partial<Recipe>): Session {
    const parent = this.get(from).experiment;
    return this.fork(from, step, name, { seed: parent.seed, setup: parent.setup, recipe: { ...parent.recipe, ...patch } }, patch);
  }

  /**
   * A new branch `name` forked from `from` at `step`, running `experiment`; `patch` records
   * what changed (flat spec keys, kept as the branch's origin). With the parent's seed and
   * setup the fork state carries over (see the module comment): the new trajectory starts with
   * copies of the parent's records 0…step. With another seed or setup the branch must fork at
   * step 0 and starts afresh. The branch's first checkpoint is its fork state.
   *
   * @throws when the name is taken or empty, or a setup/seed change forks after step 0.
   */
  fork(from: string, step: number, name: string, experiment: Experiment, patch: BranchPatch): Session {
    if (this.branches.has(name)) throw new Error(`a branch named '${name}' already exists`);
    const problem = branchNameProblem(name);
    if (problem !== null) throw new Error(problem);
    const parent = this.get(from);
    const restart = experiment.seed !== parent.experiment.seed || !sameSetup(experiment.setup, parent.experiment.setup);
    if (restart && step !== 0) {
      throw new Error(`branch '${name}' changes the ${experiment.seed !== parent.experiment.seed ? 'seed' : 'setup (model, data, loss or regularization)'}, so it must start at step 0, not step ${step}`);
    }
    let session: Session;
    let trajectory: StepRecord[];
    if (restart) {
      this.reachPlan(parent, step); // validates the step against the parent
      session = this.newSession(experiment, null);
      trajectory = [session.initialRecord()];
    } else {
      const reached = runToEnd(this.reach(parent, step));
      const probe = this.newSession(experiment, null);
      session = this.newSession(experiment, adaptSessionState(reached.session.state(), experiment.recipe, probe.objective));
      trajectory = recordsUpTo(parent.trajectory, step).map(copyRecord);
      if (reached.record !== null && indexOfStep(trajectory, step) < 0) trajectory.push(copyRecord(reached.record));
    }
    const b: Branch = { name, experiment: copyExperiment(experiment), origin: { parent: from, step, patch: copyPlain(patch), restart }, session, trajectory, checkpoints: [], every: this.every, tip: null };
    this.branches.set(name, b);
    this.addCheckpoint(b, false);
    return session;
  }

  /**
   * Re-runs a branch from spec and seed (a forked branch from its parent's replayed state at
   * the fork) up to `toStep` (default: its tip) and compares: every recorded step
   * record bit for bit (step, loss, ‖g‖, ‖Δw‖, η), the fingerprint at every checkpoint, and
   * the parameters at checkpoints and at `toStep`. 'bit-identical' when all match exactly;
   * otherwise 'within-tolerance' when the largest relative parameter difference ‖Δw‖∞/‖w‖∞ is
   * within the tolerance, else 'differs'.
   */
  replay(name: string, toStep?: number): ReplayReport {
    return runToEnd(this.replayTask(name, toStep));
  }

  /** {@link Grove.replay} as a task run in slices (the branch is never changed). */
  replayTask(name: string, toStep?: number): GroveTask<ReplayReport> {
    const b = this.get(name);
    const tip = tipStep(b);
    const target = toStep ?? tip;
    if (!Number.isInteger(target) || target < 0 || target > tip) {
      throw new Error(`replay step must be an integer in [0, ${tip}] for branch '${name}', got ${target}`);
    }
    const chain: ReplayLink[] = [];
    for (let c: Branch | null = b; c !== null; c = c.origin === null ? null : this.get(c.origin.parent)) {
      chain.unshift({ experiment: c.experiment, forkStep: c.origin === null ? null : c.origin.step, restart: c.origin?.restart ?? false });
    }
    const checkpoints = b.checkpoints.filter((c) => c.step <= target);
    const plan = planReplay(chain, target, new Set(checkpoints.map((c) => c.step)), new Set(b.trajectory.map((r) => r.step)), (e, s) => this.newSession(e, s));
    const live = b.session;
    // At the cursor the live session is the recorded state, at the tip the kept tip state; other steps are rebuilt.
    const saved = target === live.stepCount ? live : b.tip !== null && target === b.tip.step ? this.newSession(b.experiment, b.tip) : null;
    const recorded = saved === null ? this.reachPlan(b, target) : null;
    const legs = recorded === null ? plan.legs : [...plan.legs, ...recorded.legs];
    return new LegTask(legs, () =>
      compareReplay({
        trajectory: b.trajectory,
        checkpoints,
        replayed: plan.steps,
        finalRecorded: recorded === null ? (saved as Session) : recorded.reached().session,
        finalReplayed: plan.final(),
        tolerance: this.tolerance
      })
    );
  }

  private get(name: string): Branch {
    const b = this.branches.get(name);
    if (b === undefined) throw new Error(`no branch named '${name}' (branches: ${[...this.branches.keys()].join(', ')})`);
    return b;
  }

  private newSession(experiment: Experiment, state: SessionState | null): Session {
    const parts = this.parts?.(experiment);
    return state === null ? Session.create(experiment, parts) : Session.restore(experiment, state, parts);
  }

  /** A task rebuilding branch b at `step` from its nearest checkpoint, then `finish`. */
  private reach<T = Reached>(b: Branch, step: number, finish?: (r: Reached) => T): GroveTask<T> {
    const plan = this.reachPlan(b, step);
    return new LegTask(plan.legs, () => (finish ? finish(plan.reached()) : (plan.reached() as T)));
  }

  /**
   * The leg rebuilding branch b at `step`: from the nearest saved state at or before it (a
   * checkpoint, the live session, the tip state), or before it when the trajectory lacks the
   * record of `step` (so re-stepping makes it).
   */
  private reachPlan(b: Branch, step: number): { legs: Leg[]; reached(): Reached } {
    const first = b.checkpoints[0].step;
    const tip = tipStep(b);
    if (!Number.isInteger(step) || step < first || step > tip) {
      throw new Error(`step must be an integer in [${first}, ${tip}] for branch '${b.name}', got ${step}` + (step < first && b.origin ? ` (the branch starts at step ${first}; use its parent '${b.origin.parent}' for earlier steps)` : ''));
    }
    const strict = indexOfStep(b.trajectory, step) < 0;
    const saved: { step: number; state: SessionState }[] = [...b.checkpoints];
    if (b.session.stepCount !== first) saved.push({ step: b.session.stepCount, state: b.session.state() });
    if (b.tip !== null) saved.push({ step: b.tip.step, state: b.tip });
    let base = saved[0];
    for (const c of saved) if ((strict ? c.step < step : c.step <= step) && c.step > base.step) base = c;
    let out: Reached | null = null;
    let record: StepRecord | null = null;
    const legs: Leg[] = [
      {
        from: base.step,
        to: step,
        open: () => this.newSession(b.experiment, base.state),
        each: (_s, r) => {
          record = r;
        },
        close: (s) => {
          out = { session: s, record };
        }
      }
    ];
    return {
      legs,
      reached: () => {
        if (out === null) throw new Error(`branch '${b.name}' has not been rebuilt at step ${step} yet`);
        return out;
      }
    };
  }

  /** Hooks that record every update of branch b (trajectory, checkpoints, bound) before the caller's. */
  private recording(b: Branch, hooks?: StepHooks): StepHooks {
    return {
      shouldStop: hooks?.shouldStop,
      onProgress: hooks?.onProgress,
      onRecord: (r) => {
        this.after(b, r);
        hooks?.onRecord?.(r);
      }
    };
  }

  private after(b: Branch, r: StepRecord): void {
    afterUpdate(b, r, this.bound, () => this.addCheckpoint(b, false));
  }

  private addCheckpoint(b: Branch, manual: boolean): Checkpoint {
    return insertCheckpoint(b, { step: b.session.stepCount, fingerprint: b.session.fingerprint(), state: b.session.state(), manual }, this.maxAutomatic);
  }
}

/** A deep copy of a session state. */
function copyState(s: SessionState): SessionState {
  return copySessionState(s);
}
