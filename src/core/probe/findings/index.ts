/**
 * Findings: rule-based statements with the measured number, the threshold and its source, and a
 * proposal where one exists. Entry point for the worker, the CLI and the tests.
 */
export type { Finding, FindingId, Proposal, ProposalValue, Severity } from './types';
export type { Evidence, SetupFacts, SharpnessPoint, CurvatureFacts, AuditFacts, StandardizedFit } from './evidence';
export type { Rule, FindingParts } from './rule';
export type { Threshold, ThresholdName } from './thresholds';
export type { DiagnoseOptions, DiagnoseResult } from './diagnose';
export type { SharpnessPointOptions } from './gather';
export { THRESHOLDS } from './thresholds';
export { RULES, ruleOf, evaluateFindings } from './engine';
export { setupFacts, baselineLoss, staticEvidence, liveEvidence, currentActivations, sharpnessPoint, sharpnessPointFrom, standardizedFit, curvatureFacts, auditFacts, diagnoseRng } from './gather';
export { diagnoseExperiment, measurementSteps } from './diagnose';
export { roundDown } from './proposals';
