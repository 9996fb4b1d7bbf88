/** Readers of data and weights files: pure functions of bytes (no file system), typed errors only. */
export { DataFileError, type DataPlace } from './errors';
export { DEFAULT_LIMITS, type DataLimits } from './limits';
export { readCsv, parseNumber, isMissing, type CsvOptions, type CsvTable } from './csv';
export { readNpy, writeNpy, halfToDouble, type NumericArray } from './npy';
export { readNpz } from './npz';
export { readSafetensors, writeSafetensors, type Tensor } from './safetensors';
export { readTable, formatOf, type ColumnRef, type TableData, type TableRequest, type TargetKind } from './table';
export { readWeights, layersFromTensors, layersFromFlat, type LayerShapes } from './weights';
export { sha256Hex, dataHash } from './hash';
