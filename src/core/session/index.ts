/**
 * Stepping, checkpoints, branches and replay of one experiment. Entry point that re-exports
 * `core/session/*`.
 */
export { Session } from './live';
export type { StepHooks, RunReason, RunCarry, SessionParts } from './live';
export type { StopCondition } from './stop';
export { DEFAULT_DIVERGENCE_FACTOR } from './stop';
export { fingerprintState, copySessionState, copyOptimizerState } from './state-data';
export { Grove, branchNameProblem, MAX_BRANCH_NAME } from './grove';
export type { Checkpoint, GroveOptions, BranchOrigin, BranchPatch, BranchSnapshot, GroveSnapshot, ResumeData } from './grove';
export type { GroveTask } from './task';
export { boundTrajectory, strideSelection, DEFAULT_TRAJECTORY_BOUND } from './trajectory';
export type { TrajectoryBound } from './trajectory';
export type { ReplayDifference, ReplayReport } from './replay';
export { COMPARED_FIELDS, recordDifference, relativeDifference, sameRecord } from './replay';
export { freshState, rowCountOf } from './fresh';
export { adaptSessionState, adaptOptimizerState, effectiveBatch } from './adapt';
export { compareBranches, examplesAt, firstCrossing, lossVerdict, matchedSteps, SAME_LOSS } from './compare';
export type { BatchSegment, BranchComparison, CompareInput, CompareOptions, Crossing, LossVerdict, MatchedCell, MatchedStep, MatchReason, SharpnessSample } from './compare';
