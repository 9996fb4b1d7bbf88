/** Readers of data and weights files: pure functions of bytes (no file system), typed errors only. */
export { DataFileError } from './errors';
export { DEFAULT_LIMITS, type DataLimits } from './limits';
export { readCsv } from './csv';
export { readNpy, writeNpy } from './npy';
export { readNpz } from './npz';
export { readSafetensors, writeSafetensors } from './safetensors';
export { readTable, type TableData, type TableRequest, type TargetKind } from './table';
export { readWeights } from './weights';
export { sha256Hex, dataHash } from './hash';
