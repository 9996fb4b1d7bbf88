/**
 * The narrow view of `spec/` and `core/probe` that the engine host needs besides the grove
 * (stepping, checkpoints, rewind and replay come from `core/session`'s {@link Grove}). The one
 * file that maps it onto the real modules is `core-adapter.ts`.
 */
import type { Experiment } from '../core/setup';
import type { Session } from '../core/session';
import type { SpecPatch } from '../experiment/patch';
import type { NoiseScale } from '../core/probe/noise-scale';
import type { SpecLimits } from '../experiment/limits';
import type { AuditResult, CurvatureResult, SharpnessPoint, SpecProblem } from './protocol';

/** Result of parsing spec text. */
export type ParseOutcome =
  | { ok: true; experiment: Experiment; warnings: SpecProblem[] }
  | { ok: false; errors: SpecProblem[] };

/** The files a cell's spec names, as the page read them: bytes by name, and why a name was not read. */
export interface CellFiles {
  files: ReadonlyMap<string, Uint8Array>;
  problems: ReadonlyMap<string, string>;
}

/** How a long readout hears of a stop request (see `EngineCore.curvature`). */
export interface ReadoutControl {
  /** Read between Lanczos steps. */
  shouldStop: () => boolean;
  /** Settles when the stop is requested. */
  stopped: Promise<void>;
  /** Called between Lanczos steps: a promise to wait for (a turn for the worker's event loop), or undefined to go on. */
  pause: () => Promise<void> | undefined;
}

/** Parsing and the readouts over a live session. */
export interface EngineCore {
  /** Parses and validates spec text (reading the files it names from `files`) under `limits`. Never throws for bad text: returns the errors. */
  parse(specText: string, files?: CellFiles, limits?: SpecLimits): ParseOutcome;
  /** The experiment of a branch: the spec with its ancestry's patches applied in order, validated like a spec. */
  parsePatched(specText: string, patches: readonly SpecPatch[], files?: CellFiles, limits?: SpecLimits): ParseOutcome;
  /** Gradient audit of the session's current parameters over `sample` sampled entries. */
  audit(experiment: Experiment, session: Session, sample: number): AuditResult;
  /**
   * The curvature readout at the session's step: Hessian spectrum and stability summary (a
   * promise when a second thread computes part of it). On the matrix-free path `onTopEnd` gets
   * the top end alone (`partial`) as soon as it has converged, before the complete readout, and
   * `control` lets a stop request end it early (its result then has `stop` = `cancelled`).
   */
  curvature(experiment: Experiment, session: Session, k: number, denseLimit: number, onTopEnd?: (partial: CurvatureResult) => void, control?: ReadoutControl): CurvatureResult | Promise<CurvatureResult>;
  /** The gradient noise scale at the session's weights from `sample` rows' gradients (throws without data rows). */
  noise(experiment: Experiment, session: Session, sample: number): NoiseScale;
  /** The sharpness the recipe's stability rule uses, by a short Lanczos run (cheap enough to track). */
  sharpness(experiment: Experiment, session: Session): SharpnessPoint;
}
