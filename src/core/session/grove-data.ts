/** Plain data of a grove: checkpoints, options, branch snapshots, and their deep copies. */
import type { Experiment, Setup } from '../setup';
import type { SessionState, StepRecord } from '../state';
import type { Session, SessionParts } from './live';
import { copySessionState } from './state-data';
import { copyPlain } from '../plain';

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
  /** Initial spacing k of automatic checkpoints (default 10; 0 = only the first and manual ones). */
  checkpointEvery?: number;
  /** Automatic checkpoints held per branch before thinning (default 32). */
  maxAutomatic?: number;
  /** Relative tolerance for a 'within-tolerance' replay verdict (default 1e-9). */
  tolerance?: number;
  /** Most trajectory records held in memory per branch before thinning (default 20 000; see `boundTrajectory`). */
  maxRecords?: number;
  /** Newest records kept at full density when thinning (default maxRecords / 10). */
  recentRecords?: number;
  /** Objective factory (default: built from the setup); tests inject their own objectives. */
  parts?: (experiment: Experiment) => SessionParts;
}

/**
 * What a branch changes, as plain data: flat spec keys (`lr`, `layers[1].lrScale`,
 * `model.init`, …) and their new values. Core only records it; the experiment layer
 * (`experiment/patch.ts`) reads and applies it.
 */
export type BranchPatch = Readonly<Record<string, unknown>>;

/** Where a branch came from. */
export interface BranchOrigin {
  parent: string;
  step: number;
  patch: BranchPatch;
  /**
   * True when the branch changed the setup or the seed: it then starts afresh at step 0 from its
   * own setup and seed instead of carrying the parent's state over.
   */
  restart: boolean;
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
  /** The live session's state (at the branch's cursor). */
  current: SessionState;
  /**
   * The state at the tip when the cursor lies before it (steps kept after a rewind); the
   * trajectory then ends at the tip's step. Absent or null when the cursor is at the tip.
   */
  tip?: SessionState | null;
}

/** What a one-branch grove is resumed from (e.g. a decoded ledger branch). */
export interface ResumeData {
  /** The state to continue from (the head). */
  state: SessionState;
  /** Step records, steps ascending (may be thinned), the last one at the head's step. */
  trajectory: readonly StepRecord[];
  /** Saved states at or before the head, any order (duplicates by step are ignored). */
  checkpoints: readonly { step: number; fingerprint: string; state: SessionState }[];
}

/** Plain-data form of a whole grove, branches in creation order. */
export interface GroveSnapshot {
  branches: BranchSnapshot[];
}

/** A branch as the grove holds it (internal). */
export interface Branch {
  name: string;
  experiment: Experiment;
  origin: BranchOrigin | null;
  session: Session;
  trajectory: StepRecord[];
  checkpoints: Checkpoint[];
  every: number;
  /** State at the tip while the session is behind it (see `grove-book.ts`), else null. */
  tip: SessionState | null;
}

/** Longest branch name. */
export const MAX_BRANCH_NAME = 40;

/**
 * Why `name` cannot name a branch, or null when it can: 1 to {@link MAX_BRANCH_NAME}
 * characters, no control characters, no leading or trailing space.
 */
export function branchNameProblem(name: string): string | null {
  if (name.trim() === '') return 'a branch name must not be empty';
  if (name !== name.trim()) return `a branch name must not start or end with a space, got ${JSON.stringify(name)}`;
  if ([...name].length > MAX_BRANCH_NAME) return `a branch name has at most ${MAX_BRANCH_NAME} characters, got ${[...name].length}`;
  // eslint-disable-next-line no-control-regex
  if (/[\u0000-\u001f\u007f]/.test(name)) return `a branch name must not contain control characters, got ${JSON.stringify(name)}`;
  return null;
}

/** A deep copy of a step record. */
export function copyRecord(r: StepRecord): StepRecord {
  return { ...r, layers: r.layers.map((l) => ({ ...l })) };
}

/** Copies seed and recipe; the setup (with its data arrays) is shared read-only. */
export function copyExperiment(e: Experiment): Experiment {
  const r = e.recipe;
  return { seed: e.seed, setup: e.setup, recipe: { ...r, schedule: { ...r.schedule }, layers: r.layers.map((l) => ({ ...l })) } };
}

/** A deep copy of a checkpoint. */
export function copyCheckpoint(c: Checkpoint): Checkpoint {
  return { step: c.step, fingerprint: c.fingerprint, state: copySessionState(c.state), manual: c.manual };
}


/** A copy of a branch origin (the patch's values are plain JSON, copied deeply). */
export function copyOrigin(o: BranchOrigin | null): BranchOrigin | null {
  return o === null ? null : { parent: o.parent, step: o.step, patch: copyPlain(o.patch), restart: o.restart };
}

/**
 * True when two setups describe the same objective: the same model, loss, regularization and
 * data, compared value by value (data arrays bit for bit).
 */
export function sameSetup(a: Setup, b: Setup): boolean {
  return a === b || deepEqual(a, b);
}

function deepEqual(a: unknown, b: unknown): boolean {
  if (Object.is(a, b)) return true;
  if (typeof a !== 'object' || typeof b !== 'object' || a === null || b === null) return false;
  if (ArrayBuffer.isView(a) || ArrayBuffer.isView(b)) {
    if (!(a instanceof Float64Array && b instanceof Float64Array) && !(a instanceof Int32Array && b instanceof Int32Array)) return false;
    if (a.length !== b.length) return false;
    for (let i = 0; i < a.length; i++) if (!Object.is(a[i], b[i])) return false;
    return true;
  }
  if (Array.isArray(a) !== Array.isArray(b)) return false;
  const ka = Object.keys(a);
  const kb = Object.keys(b);
  if (ka.length !== kb.length) return false;
  return ka.every((k) => Object.prototype.hasOwnProperty.call(b, k) && deepEqual((a as Record<string, unknown>)[k], (b as Record<string, unknown>)[k]));
}
