/**
 * Findings: rule-based statements with the measured number, the threshold and its source, and a
 * proposal where one exists. Entry point for the worker, the CLI and the tests.
 */
export type { Finding, FindingId, Proposal } from './types';
export type { Evidence, SharpnessPoint } from './evidence';
export { THRESHOLDS } from './thresholds';
export { evaluateFindings } from './engine';
export { setupFacts, sharpnessPointFrom, auditFacts } from './gather';
export { diagnoseExperiment } from './diagnose';
export { roundDown } from './proposals';
