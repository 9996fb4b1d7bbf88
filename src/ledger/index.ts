/**
 * The ledger layer: the versioned record a stepwell cell keeps in notebook metadata under
 * {@link LEDGER_KEY}, with exact encode/decode, validation, migration and size policies.
 * Pure: no DOM or JupyterLab; runs in Node, a Web Worker and the browser.
 */
export { LEDGER_FORMAT, LEDGER_KEY, LEDGER_VERSION, LedgerError } from './types';
export type { EncodedOptimizerState, EncodedScalar, EncodedSessionState, EncodedTrajectory, Ledger, LedgerBranch, LedgerCheckpoint, LedgerReadouts } from './types';
export { base64FromBytes, base64FromFloat64, base64FromInt32, bytesFromBase64, float64FromBase64, int32FromBase64 } from './base64';
export { decodeScalar, decodeSessionState, decodeTrajectory, encodeScalar, encodeSessionState, encodeTrajectory, trajectoryDigest } from './codec';
export { migrateLedger, migrateV1, MIGRATIONS, OLDEST_READABLE_VERSION, recoverSpec } from './migrate';
export type { LedgerJson, MigrateResult, Migration } from './migrate';
export { validateLedger } from './check';
export type { LedgerResult, ValidateOptions } from './check';
export { capTrajectory, thinCheckpoints } from './caps';
export { buildLedger, decodeBranch, decodeBranches, DEFAULT_LEDGER_LIMITS, ledgerSize, serializeLedger } from './compose';
export type { BranchInput, DecodedBranch, DecodeOptions, LedgerInput, LedgerLimits } from './compose';
export { sha256Hex } from './hash';
export { capSharpness, decodeLoose, decodeReadouts, encodeLoose, encodeReadouts, MAX_READOUT_BYTES, MAX_SHARPNESS_POINTS, readoutsDigest } from './readouts';
export type { DecodedReadouts, ReadoutsInput } from './readouts';
export { branchSnapshot, groveFromLedger, groveFromOpened } from './restore';
export { coherenceProblems } from './coherence';
export { LedgerOpenError, locate, MAX_LEDGER_PROBLEMS, openLedger, prototypeProblem, summarizeProblems } from './open';
export type { BranchExperiment, ExperimentMaker, LedgerProblem, OpenedLedger } from './open';
export { FORBIDDEN_KEYS } from './codec';
export type { ExperimentOf, RestoredGrove } from './restore';
