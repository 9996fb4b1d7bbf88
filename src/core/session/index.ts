/**
 * Stepping, checkpoints, branches and replay of one experiment. Entry point that re-exports
 * `core/session/*`.
 */
export { Session } from './live';
export type { StepHooks, RunReason } from './live';
export type { StopCondition } from './stop';
export { fingerprintState } from './state-data';
export { Grove } from './grove';
export type { GroveOptions, BranchSnapshot, GroveSnapshot } from './grove';
export type { GroveTask } from './task';
export { boundTrajectory } from './trajectory';
export type { ReplayDifference } from './replay';
export { sameRecord } from './replay';
export { effectiveBatch } from './adapt';
export { compareBranches, examplesAt, firstCrossing, lossVerdict, matchedSteps, SAME_LOSS } from './compare';
export type { BatchSegment, BranchComparison, CompareInput, LossVerdict, MatchedCell } from './compare';
