/**
 * The narrow view of `core/` and `spec/` that the engine host needs. The host is written
 * against this interface so it can be unit-tested in Node without a Worker; the one file
 * that maps it onto the real modules is `core-adapter.ts`.
 */
import type { Experiment } from '../core/setup';
import type { SessionState, StepRecord } from '../core/state';
import type { AuditResult, CurvatureResult, SharpnessPoint, SpecProblem } from './protocol';

/** A live optimizer session as the host drives it. */
export interface EngineSession {
  /** Updates applied so far. */
  readonly stepCount: number;
  /** Number of parameters. */
  readonly parameterCount: number;
  /** The current weights (a live view: read only). */
  readonly parameters: Float64Array;
  /** Applies exactly one optimizer update and returns its record. */
  stepOnce(): StepRecord;
  /** The record of the current state without updating (record 0 at a fresh session). */
  initialRecord(): StepRecord;
  /** A deep copy of the current state. */
  state(): SessionState;
  /** Fingerprint (hex) of the current state. */
  fingerprint(): string;
}

/** Result of parsing spec text. */
export type ParseOutcome =
  | { ok: true; experiment: Experiment; warnings: SpecProblem[] }
  | { ok: false; errors: SpecProblem[] };

/** Factory functions over the numerics. */
export interface EngineCore {
  /** Parses and validates spec text. Never throws for bad text: returns the errors. */
  parse(specText: string): ParseOutcome;
  /** A fresh session initialized from the experiment's seed. */
  create(experiment: Experiment): EngineSession;
  /** A session resumed exactly from a saved state. Throws with a clear message on a mismatch. */
  restore(experiment: Experiment, state: SessionState): EngineSession;
  /** Gradient audit of the session's current parameters over `sample` sampled entries. */
  audit(experiment: Experiment, session: EngineSession, sample: number): AuditResult;
  /** Hessian spectrum and stability summary at the session's current weights. */
  curvature(experiment: Experiment, session: EngineSession, k: number, denseLimit: number): CurvatureResult;
  /** The sharpness the recipe's stability rule uses, by a short Lanczos run (cheap enough to track). */
  sharpness(experiment: Experiment, session: EngineSession): SharpnessPoint;
}
