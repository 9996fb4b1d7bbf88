/**
 * The ledger layer: the versioned record a stepwell cell keeps in notebook metadata under
 * {@link LEDGER_KEY}, with exact encode/decode, validation, migration and size policies.
 * Pure: no DOM or JupyterLab; runs in Node, a Web Worker and the browser.
 */
export { LEDGER_KEY, LEDGER_VERSION, LedgerError } from './types';
export type { Ledger } from './types';
export { base64FromBytes, base64FromFloat64, base64FromInt32, bytesFromBase64, float64FromBase64, int32FromBase64 } from './base64';
export { decodeScalar, decodeSessionState, decodeTrajectory, encodeScalar, encodeSessionState, encodeTrajectory, trajectoryDigest } from './codec';
export { migrateLedger, migrateV1, recoverSpec } from './migrate';
export type { Migration } from './migrate';
export { validateLedger } from './check';
export { capTrajectory, thinCheckpoints } from './caps';
export { buildLedger, decodeBranch, decodeBranches, ledgerSize, serializeLedger } from './compose';
export type { DecodedBranch, LedgerInput } from './compose';
export { sha256Hex } from './hash';
export { capSharpness, decodeLoose, decodeReadouts, encodeLoose, encodeReadouts, MAX_READOUT_BYTES } from './readouts';
export type { DecodedReadouts, ReadoutsInput } from './readouts';
export { groveFromLedger } from './restore';
export type { RestoredGrove } from './restore';
