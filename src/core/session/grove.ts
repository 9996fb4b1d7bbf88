/**
 * A grove: the named branches of one experiment. Each branch owns a live {@link Session}, its
 * trajectory (step records from record 0), and its checkpoints; nothing is shared between
 * branches (every state handed in or out is a deep copy).
 *
 * Checkpoints (trade term): the initial state of a branch, automatic ones every k steps, and
 * manual ones on request. Thinning rule for the automatic ones: when more than
 * `maxAutomatic` are held, k doubles and automatic checkpoints whose step is not a multiple of
 * the new k are dropped (the branch's first checkpoint and manual ones are always kept), so
 * memory stays bounded and checkpoints stay evenly spread over a long run.
 *
 * Branching at step s of branch A with a recipe patch: the state of A at s (rewound from A's
 * checkpoints without disturbing A) is carried over to the new recipe by
 * {@link adaptSessionState}: optimizer state re-initialized when the optimizer kind changes,
 * kept where compatible otherwise; weights, step count and batch generator kept.
 */
import type { Experiment, Recipe } from '../setup';
import type { SessionState, StepRecord } from '../state';
import { adaptSessionState } from './adapt';
import { Session, type SessionParts, type StepHooks } from './session';
import { copySessionState } from './state-data';
import type { StopCondition } from './stop';
import { compareReplay, type ReplayedStep, type ReplayReport } from './replay';

/** A saved state at one step with its fingerprint. */
export interface Checkpoint {
  step: number;
  fingerprint: string;
  state: SessionState;
  /** True when the user asked for it (never thinned away). */
  manual: boolean;
}

/** Options of a {@link Grove}. */
export interface GroveOptions {
  /** Initial spacing k of automatic checkpoints (default 10). */
  checkpointEvery?: number;
  /** Automatic checkpoints held per branch before thinning (default 32). */
  maxAutomatic?: number;
  /** Relative tolerance for a 'within-tolerance' replay verdict (default 1e-9). */
  tolerance?: number;
  /** Objective factory (default: built from the setup); tests inject their own objectives. */
  parts?: (experiment: Experiment) => SessionParts;
}

/** Where a branch came from. */
export interface BranchOrigin {
  parent: string;
  step: number;
  patch: Partial<Recipe>;
}

/** Plain-data form of one branch (see {@link Grove.snapshot}). */
export interface BranchSnapshot {
  name: string;
  experiment: Experiment;
  origin: BranchOrigin | null;
  trajectory: StepRecord[];
  checkpoints: Checkpoint[];
  /** Current spacing of automatic checkpoints (after thinning). */
  every: number;
  /** The live session's state. */
  current: SessionState;
}

/** Plain-data form of a whole grove, branches in creation order. */
export interface GroveSnapshot {
  branches: BranchSnapshot[];
}

interface Branch {
  name: string;
  experiment: Experiment;
  origin: BranchOrigin | null;
  session: Session;
  trajectory: StepRecord[];
  checkpoints: Checkpoint[];
  every: number;
}

function copyRecord(r: StepRecord): StepRecord {
  return { ...r, layers: r.layers.map((l) => ({ ...l })) };
}

/** Copies seed and recipe; the setup (with its data arrays) is shared read-only. */
function copyExperiment(e: Experiment): Experiment {
  const r = e.recipe;
  return { seed: e.seed, setup: e.setup, recipe: { ...r, schedule: { ...r.schedule }, layers: r.layers.map((l) => ({ ...l })) } };
}

function copyCheckpoint(c: Checkpoint): Checkpoint {
  return { step: c.step, fingerprint: c.fingerprint, state: copySessionState(c.state), manual: c.manual };
}

/** The branches of one experiment (see the module comment). */
export class Grove {
  private readonly branches = new Map<string, Branch>();
  private readonly every: number;
  private readonly maxAutomatic: number;
  private readonly tolerance: number;
  private readonly parts: ((experiment: Experiment) => SessionParts) | undefined;

  private constructor(opts: GroveOptions) {
    this.every = opts.checkpointEvery ?? 10;
    this.maxAutomatic = opts.maxAutomatic ?? 32;
    this.tolerance = opts.tolerance ?? 1e-9;
    this.parts = opts.parts;
    if (!Number.isInteger(this.every) || this.every < 1) throw new Error(`checkpointEvery must be a positive integer, got ${this.every}`);
    if (!Number.isInteger(this.maxAutomatic) || this.maxAutomatic < 2) throw new Error(`maxAutomatic must be an integer ≥ 2, got ${this.maxAutomatic}`);
  }

  /** A grove with one branch, `root` (default name 'main'), at step 0 of `experiment`. */
  static create(experiment: Experiment, opts: GroveOptions = {}, root = 'main'): Grove {
    const g = new Grove(opts);
    const session = g.newSession(experiment, null);
    g.branches.set(root, { name: root, experiment, origin: null, session, trajectory: [session.initialRecord()], checkpoints: [], every: g.every });
    g.addCheckpoint(g.get(root), false);
    return g;
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
        origin: b.origin === null ? null : { parent: b.origin.parent, step: b.origin.step, patch: { ...b.origin.patch } },
        trajectory: b.trajectory.map(copyRecord),
        checkpoints: b.checkpoints.map(copyCheckpoint),
        every: b.every,
        current: b.session.state()
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
      if (b.trajectory.length !== b.current.step + 1) throw new Error(`branch '${b.name}' has ${b.trajectory.length} trajectory records for step ${b.current.step} (expected ${b.current.step + 1})`);
      g.branches.set(b.name, {
        name: b.name,
        experiment: copyExperiment(b.experiment),
        origin: b.origin === null ? null : { ...b.origin, patch: { ...b.origin.patch } },
        session: g.newSession(b.experiment, b.current),
        trajectory: b.trajectory.map(copyRecord),
        checkpoints: b.checkpoints.map(copyCheckpoint),
        every: b.every
      });
    }
    return g;
  }

  /** Branch names in creation order. */
  names(): string[] {
    return [...this.branches.keys()];
  }

  /** The experiment (with its recipe) a branch runs. */
  experiment(name: string): Experiment {
    return copyExperiment(this.get(name).experiment);
  }

  /** Where a branch was forked from (null for the root). */
  origin(name: string): BranchOrigin | null {
    const o = this.get(name).origin;
    return o === null ? null : { parent: o.parent, step: o.step, patch: { ...o.patch } };
  }

  /** The live session of a branch (stepping it directly bypasses trajectory and checkpoints). */
  session(name: string): Session {
    return this.get(name).session;
  }

  /** A copy of the branch's trajectory, record 0 first. */
  trajectory(name: string): StepRecord[] {
    return this.get(name).trajectory.map(copyRecord);
  }

  /** Copies of the branch's checkpoints, in step order. */
  checkpoints(name: string): Checkpoint[] {
    return this.get(name).checkpoints.map(copyCheckpoint);
  }

  /** Steps a branch n times, recording the trajectory and automatic checkpoints. */
  step(name: string, n = 1, hooks?: StepHooks): StepRecord[] {
    const b = this.get(name);
    const out: StepRecord[] = [];
    for (let i = 0; i < n; i++) {
      if (i > 0 && hooks?.shouldStop?.()) break;
      const [r] = b.session.step(1);
      this.after(b, r);
      out.push(r);
      hooks?.onProgress?.(i + 1, n);
    }
    return out.map(copyRecord);
  }

  /** {@link Session.runUntil} on a branch, recording trajectory and checkpoints. */
  runUntil(name: string, cond: StopCondition, maxSteps: number, hooks?: StepHooks): ReturnType<Session['runUntil']> {
    const b = this.get(name);
    const res = b.session.runUntil(cond, maxSteps, hooks);
    for (const r of res.records) this.after(b, r);
    return { records: res.records.map(copyRecord), reason: res.reason };
  }

  /** Saves a manual checkpoint of the branch's current state and returns a copy of it. */
  checkpoint(name: string): Checkpoint {
    const b = this.get(name);
    const existing = b.checkpoints.find((c) => c.step === b.session.stepCount);
    if (existing) {
      existing.manual = true;
      return copyCheckpoint(existing);
    }
    return copyCheckpoint(this.addCheckpoint(b, true));
  }

  /** The state of a branch at `step` (≤ its current step), without changing the branch. */
  stateAt(name: string, step: number): SessionState {
    return this.sessionAt(this.get(name), step).state();
  }

  /**
   * Moves a branch back to `step`: restores the nearest checkpoint at or before it and
   * re-steps to exactly `step`; trajectory records and checkpoints after `step` are dropped.
   */
  rewind(name: string, step: number): Session {
    const b = this.get(name);
    const s = this.sessionAt(b, step);
    b.session = s;
    b.trajectory.length = step + 1;
    b.checkpoints = b.checkpoints.filter((c) => c.step <= step);
    return s;
  }

  /**
   * A new branch `name` forked from `from` at `step` with `patch` applied to the recipe
   * (see the module comment for what carries over). Its trajectory starts with copies of the
   * parent's records 0…step; its first checkpoint is the fork state.
   */
  branch(from: string, step: number, name: string, patch: Partial<Recipe>): Session {
    if (this.branches.has(name)) throw new Error(`a branch named '${name}' already exists`);
    if (name.trim() === '') throw new Error('a branch name must not be empty');
    const parent = this.get(from);
    const experiment: Experiment = { seed: parent.experiment.seed, setup: parent.experiment.setup, recipe: { ...parent.experiment.recipe, ...patch } };
    const base = this.sessionAt(parent, step).state();
    const probe = this.newSession(experiment, null);
    const state = adaptSessionState(base, experiment.recipe, probe.objective);
    const session = this.newSession(experiment, state);
    const b: Branch = {
      name,
      experiment,
      origin: { parent: from, step, patch: { ...patch } },
      session,
      trajectory: parent.trajectory.slice(0, step + 1).map(copyRecord),
      checkpoints: [],
      every: this.every
    };
    this.branches.set(name, b);
    this.addCheckpoint(b, false);
    return session;
  }

  /**
   * Re-runs a branch from spec and seed (a forked branch from its parent's replayed state at
   * the fork) up to `toStep` (default: its current step) and compares: the full-batch loss of
   * every recorded step bit for bit, the fingerprint at every checkpoint, and the parameters at
   * checkpoints and at `toStep`. 'bit-identical' when all match exactly; otherwise
   * 'within-tolerance' when the largest relative parameter difference ‖Δw‖∞/‖w‖∞ is within the
   * tolerance, else 'differs'.
   */
  replay(name: string, toStep?: number): ReplayReport {
    const b = this.get(name);
    const target = toStep ?? b.session.stepCount;
    if (!Number.isInteger(target) || target < 0 || target > b.session.stepCount) {
      throw new Error(`replay step must be an integer in [0, ${b.session.stepCount}] for branch '${name}', got ${target}`);
    }
    const recorded = this.sessionAt(b, target);
    const replayed = this.replaySession(b, target);
    return compareReplay({
      trajectory: b.trajectory,
      checkpoints: b.checkpoints.filter((c) => c.step <= target),
      replayed: replayed.steps,
      finalRecorded: recorded,
      finalReplayed: replayed.session,
      tolerance: this.tolerance
    });
  }

  private replaySession(b: Branch, target: number): { session: Session; steps: ReplayedStep[] } {
    let session: Session;
    let steps: ReplayedStep[] = [];
    if (b.origin === null) {
      session = this.newSession(b.experiment, null);
    } else {
      const parent = this.get(b.origin.parent);
      const up = this.replaySession(parent, b.origin.step);
      steps = up.steps.filter((s) => s.step <= b.origin!.step);
      const probe = up.session;
      session = this.newSession(b.experiment, adaptSessionState(probe.state(), b.experiment.recipe, probe.objective));
    }
    const checkpointSteps = new Set(b.checkpoints.map((c) => c.step));
    const note = (): void => {
      const at = checkpointSteps.has(session.stepCount);
      steps.push({ step: session.stepCount, loss: session.stepCount === 0 ? session.initialRecord().loss : NaN, fingerprint: at ? session.fingerprint() : null, params: at ? Float64Array.from(session.parameters) : null });
    };
    if (b.origin === null) note();
    else if (checkpointSteps.has(session.stepCount)) {
      // the fork state under the branch's recipe replaces the parent's entry for this step
      const forkLoss = steps.length > 0 ? steps[steps.length - 1].loss : NaN;
      steps = steps.filter((s) => s.step !== session.stepCount);
      steps.push({ step: session.stepCount, loss: forkLoss, fingerprint: session.fingerprint(), params: Float64Array.from(session.parameters) });
    }
    while (session.stepCount < target) {
      const [r] = session.step(1);
      note();
      steps[steps.length - 1].loss = r.loss;
    }
    return { session, steps };
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

  /** A new session at `step` of branch b, rebuilt from the nearest checkpoint ≤ step. */
  private sessionAt(b: Branch, step: number): Session {
    const first = b.checkpoints[0].step;
    if (!Number.isInteger(step) || step < first || step > b.session.stepCount) {
      throw new Error(`step must be an integer in [${first}, ${b.session.stepCount}] for branch '${b.name}', got ${step}` + (step < first && b.origin ? ` (the branch starts at step ${first}; use its parent '${b.origin.parent}' for earlier steps)` : ''));
    }
    let base = b.checkpoints[0];
    for (const c of b.checkpoints) if (c.step <= step && c.step >= base.step) base = c;
    const s = this.newSession(b.experiment, base.state);
    if (step > base.step) s.step(step - base.step);
    return s;
  }

  private after(b: Branch, r: StepRecord): void {
    b.trajectory.push(copyRecord(r));
    if (r.step % b.every === 0) this.addCheckpoint(b, false);
  }

  private addCheckpoint(b: Branch, manual: boolean): Checkpoint {
    const c: Checkpoint = { step: b.session.stepCount, fingerprint: b.session.fingerprint(), state: b.session.state(), manual };
    b.checkpoints.push(c);
    this.thin(b);
    return c;
  }

  private thin(b: Branch): void {
    const first = b.checkpoints[0];
    const automatic = (c: Checkpoint): boolean => !c.manual && c !== first;
    while (b.checkpoints.filter(automatic).length > this.maxAutomatic) {
      b.every *= 2;
      b.checkpoints = b.checkpoints.filter((c) => !automatic(c) || c.step % b.every === 0);
    }
  }
}
