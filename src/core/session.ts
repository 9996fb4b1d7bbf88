/**
 * Stepping, checkpoints, branches and replay of one experiment. Entry point that re-exports
 * `core/session/*`.
 */
export { Session } from './session/session';
export type { StepHooks, RunReason, RunCarry, SessionParts } from './session/session';
export type { StopCondition } from './session/stop';
export { DEFAULT_DIVERGENCE_FACTOR } from './session/stop';
export { fingerprintState, copySessionState, copyOptimizerState } from './session/state-data';
export { Grove } from './session/grove';
export type { Checkpoint, GroveOptions, BranchOrigin, BranchSnapshot, GroveSnapshot, ResumeData } from './session/grove';
export type { GroveTask } from './session/task';
export { boundTrajectory, strideSelection, DEFAULT_TRAJECTORY_BOUND } from './session/trajectory';
export type { TrajectoryBound } from './session/trajectory';
export type { ReplayReport } from './session/replay';
export { relativeDifference, sameRecord } from './session/replay';
export { adaptSessionState, adaptOptimizerState, effectiveBatch } from './session/adapt';
