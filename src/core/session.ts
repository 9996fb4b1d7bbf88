/**
 * Stepping, checkpoints, branches and replay of one experiment. Entry point that re-exports
 * `core/session/*`.
 */
export { Session } from './session/session';
export type { StepHooks, RunReason, SessionParts } from './session/session';
export type { StopCondition } from './session/stop';
export { DEFAULT_DIVERGENCE_FACTOR } from './session/stop';
export { fingerprintState, copySessionState, copyOptimizerState } from './session/state-data';
