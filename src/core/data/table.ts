/**
 * From the bytes of a data file to the numbers a {@link DataSetup} holds: choosing feature and
 * target columns, turning text class labels into indices (with the mapping kept), refusing
 * missing and non-numeric values with their row and column. One function per format; all pure.
 */
import type { DataReading } from '../setup';
import { isMissing, parseNumber, readCsv, type CsvTable } from './csv';
import { DataFileError, inFile } from './errors';
import { DEFAULT_LIMITS, type DataLimits } from './limits';
import { readNpy, type NumericArray } from './npy';
import { readNpz } from './npz';
import { openParquet } from './parquet';

/** A column named by its header text or its 0-based position. */
export type ColumnRef = string | number;

/** How the target column is read: regression values, class indices, or 0/1 labels. */
export type TargetKind = 'value' | 'class' | 'binary';

/** What to read from a file (the spec's `data` mapping, resolved). */
export interface TableRequest {
  /** Feature columns (CSV, npy, parquet) or the feature array's name (npz); default: every column but the targets / 'x'. */
  features?: ColumnRef[] | string;
  /** Target column(s) (CSV, npy) or the target array's name (npz); default: the last column / 'y'. */
  target?: ColumnRef | ColumnRef[];
  /** Class labels in index order (text targets); default: the labels found, sorted. */
  classes?: string[];
  header?: boolean | 'auto';
  delimiter?: string;
  targetKind: TargetKind;
}

/** Numbers read from a file (or a file and its target file). */
export interface TableData {
  rows: number;
  inputs: number;
  targets: number;
  x: Float64Array;
  y: Float64Array;
  classes?: string[];
  reading: DataReading;
}

/** The format a file name implies, or a typed error. */
export function formatOf(name: string): 'csv' | 'npy' | 'npz' | 'parquet' {
  const lower = name.toLowerCase();
  if (lower.endsWith('.csv') || lower.endsWith('.tsv') || lower.endsWith('.txt')) return 'csv';
  if (lower.endsWith('.npy')) return 'npy';
  if (lower.endsWith('.npz')) return 'npz';
  if (lower.endsWith('.parquet')) return 'parquet';
  throw new DataFileError(`${name}: Stepwell reads .csv (.tsv, .txt), .npy, .npz and .parquet data files; rename the file or convert it`, { file: name });
}

/** Index of a column reference in a table of `width` columns with an optional header. */
function columnIndex(ref: ColumnRef, header: string[] | null, width: number, file: string, key: string): number {
  if (typeof ref === 'number') {
    if (!Number.isInteger(ref) || ref < 0 || ref >= width) throw new DataFileError(inFile(file, `${key} column ${ref} does not exist: the file has columns 0 to ${width - 1}`), { file });
    return ref;
  }
  if (header === null) throw new DataFileError(inFile(file, `${key} names the column '${ref}', but the file has no header row; name columns by position (0-based) or add a header`), { file });
  const i = header.indexOf(ref);
  if (i < 0) throw new DataFileError(inFile(file, `${key} names the column '${ref}', which the header does not have (columns: ${header.slice(0, 20).join(', ')}${header.length > 20 ? ', …' : ''})`), { file, column: ref });
  return i;
}

const listOf = (v: ColumnRef | ColumnRef[] | undefined): ColumnRef[] | undefined => (v === undefined ? undefined : Array.isArray(v) ? v : [v]);

/** Resolves feature and target columns: targets default to the last column, features to the rest. */
function resolveColumns(req: TableRequest, header: string[] | null, width: number, file: string, targetsElsewhere: boolean): { features: number[]; targets: number[] } {
  if (typeof req.features === 'string') throw new DataFileError(inFile(file, `data.features must be a list of columns for a table, got the name '${req.features}'`), { file });
  const targets = targetsElsewhere ? [] : (listOf(req.target) ?? [width - 1]).map((r) => columnIndex(r, header, width, file, 'data.target'));
  const features = req.features !== undefined ? req.features.map((r) => columnIndex(r, header, width, file, 'data.features')) : [...Array(width).keys()].filter((j) => !targets.includes(j));
  const both = features.find((j) => targets.includes(j));
  if (both !== undefined) throw new DataFileError(inFile(file, `column ${header?.[both] ?? both} is both a feature and a target`), { file });
  if (features.length === 0) throw new DataFileError(inFile(file, 'leaves no feature column once the target is taken'), { file });
  return { features, targets };
}

const columnName = (header: string[] | null, j: number): string => (header !== null ? `'${header[j]}'` : `${j}`);

/** Targets of one column as class indices (numbers or text labels) or values. */
function targetColumn(fields: string[], req: TableRequest, where: (i: number) => string, file: string): { values: Float64Array; classes?: string[] } {
  const values = new Float64Array(fields.length);
  const numeric = fields.every((f) => parseNumber(f) !== undefined || isMissing(f));
  fields.forEach((f, i) => {
    if (isMissing(f)) throw new DataFileError(inFile(file, `${where(i)}: missing target value ${JSON.stringify(f)}; remove the row or fill it in`), { file });
  });
  if (numeric && req.classes === undefined) {
    fields.forEach((f, i) => {
      const v = parseNumber(f) as number;
      if (req.targetKind === 'class' && !(Number.isInteger(v) && v >= 0)) throw new DataFileError(inFile(file, `${where(i)}: class ${f} is not a non-negative integer index`), { file });
      if (req.targetKind === 'binary' && !(v >= 0 && v <= 1)) throw new DataFileError(inFile(file, `${where(i)}: target ${f} is outside [0, 1], which binary-cross-entropy needs`), { file });
      values[i] = v;
    });
    return { values };
  }
  if (req.targetKind === 'value') {
    const i = fields.findIndex((f) => parseNumber(f) === undefined);
    throw new DataFileError(inFile(file, `${where(i)}: ${JSON.stringify(fields[i])} is not a number (the loss is mse, so targets must be numeric)`), { file });
  }
  const labels = fields.map((f) => f.trim());
  const classes = req.classes ?? [...new Set(labels)].sort();
  if (req.targetKind === 'binary' && classes.length !== 2) throw new DataFileError(inFile(file, `binary-cross-entropy needs exactly 2 labels, the target column holds ${classes.length}${req.classes ? ' (data.classes)' : ''}: ${classes.slice(0, 8).join(', ')}`), { file });
  const index = new Map(classes.map((c, k) => [c, k]));
  labels.forEach((l, i) => {
    const k = index.get(l);
    if (k === undefined) throw new DataFileError(inFile(file, `${where(i)}: label ${JSON.stringify(l)} is not one of data.classes (${classes.join(', ')})`), { file });
    values[i] = k;
  });
  return { values, classes };
}

/** Reads a CSV file into features and targets. */
export function tableFromCsv(bytes: Uint8Array, file: string, req: TableRequest, limits: DataLimits = DEFAULT_LIMITS): TableData {
  const t: CsvTable = readCsv(bytes, file, { header: req.header, delimiter: req.delimiter }, limits);
  const width = t.rows[0].length;
  const { features, targets } = resolveColumns(req, t.header, width, file, false);
  const n = t.rows.length;
  if (n * features.length > limits.maxValues) throw new DataFileError(inFile(file, `holds ${n}×${features.length} feature values, above the limit of ${limits.maxValues}`), { file });
  if (req.targetKind !== 'value' && targets.length !== 1) throw new DataFileError(inFile(file, `a classification loss takes one target column, data.target names ${targets.length}`), { file });
  const x = new Float64Array(n * features.length);
  const row = (i: number): string => `row ${t.firstRow + i}`;
  for (let i = 0; i < n; i++) {
    const r = t.rows[i];
    for (let k = 0; k < features.length; k++) {
      const j = features[k];
      const f = r[j];
      const v = parseNumber(f);
      if (v === undefined) {
        const what = isMissing(f) ? `missing value ${JSON.stringify(f)}` : `${JSON.stringify(f.length > 40 ? `${f.slice(0, 40)}…` : f)} is not a number`;
        throw new DataFileError(inFile(file, `${row(i)}, column ${columnName(t.header, j)}: ${what}`), { file, row: t.firstRow + i, column: t.header?.[j] ?? String(j) });
      }
      x[i * features.length + k] = v;
    }
  }
  const y = new Float64Array(n * targets.length);
  let classes: string[] | undefined;
  targets.forEach((j, k) => {
    const col = targetColumn(t.rows.map((r) => r[j]), req, (i) => `${row(i)}, column ${columnName(t.header, j)}`, file);
    for (let i = 0; i < n; i++) y[i * targets.length + k] = col.values[i];
    classes = col.classes;
  });
  const reading: DataReading = { format: 'csv', header: t.header !== null, delimiter: t.delimiter, featureColumns: features, targetColumns: targets };
  return { rows: n, inputs: features.length, targets: targets.length, x, y, ...(classes ? { classes } : {}), reading };
}

/**
 * Reads a parquet file into features and targets: columns chosen by name or position as in a
 * CSV (the column names are its header), text features parsed as numbers, a text target mapped
 * to class indices. Nulls and non-finite features are refused with their row and column.
 */
export function tableFromParquet(bytes: Uint8Array, file: string, req: TableRequest, limits: DataLimits = DEFAULT_LIMITS): TableData {
  const t = openParquet(bytes, file, limits);
  const { features, targets } = resolveColumns(req, t.names, t.names.length, file, false);
  const n = t.rows;
  if (n * features.length > limits.maxValues) throw new DataFileError(inFile(file, `holds ${n}×${features.length} feature values, above the limit of ${limits.maxValues}`), { file });
  if (req.targetKind !== 'value' && targets.length !== 1) throw new DataFileError(inFile(file, `a classification loss takes one target column, data.target names ${targets.length}`), { file });
  const cols = t.read([...features, ...targets]);
  const x = new Float64Array(n * features.length);
  features.forEach((j, k) => {
    const col = cols[k];
    for (let i = 0; i < n; i++) {
      const raw = col.values[i];
      const v = typeof raw === 'string' ? parseNumber(raw) : raw;
      if (v === null || v === undefined || !Number.isFinite(v)) {
        const what = raw === null ? 'missing value (null)' : typeof raw === 'string' ? `${JSON.stringify(raw.length > 40 ? `${raw.slice(0, 40)}…` : raw)} is not a number` : `${raw} (non-finite values are not accepted)`;
        throw new DataFileError(inFile(file, `row ${i + 1}, column '${t.names[j]}': ${what}`), { file, row: i + 1, column: t.names[j] });
      }
      x[i * features.length + k] = v;
    }
  });
  const y = new Float64Array(n * targets.length);
  let classes: string[] | undefined;
  targets.forEach((j, k) => {
    const fields = cols[features.length + k].values.map((v) => (v === null ? '' : String(v)));
    const col = targetColumn(fields, req, (i) => `row ${i + 1}, column '${t.names[j]}'`, file);
    for (let i = 0; i < n; i++) y[i * targets.length + k] = col.values[i];
    classes = col.classes;
  });
  const reading: DataReading = { format: 'parquet', featureColumns: features, targetColumns: targets };
  return { rows: n, inputs: features.length, targets: targets.length, x, y, ...(classes ? { classes } : {}), reading };
}

/** An array as a matrix: 1-D arrays become one column. */
function asMatrix(a: NumericArray, file: string, what: string): { rows: number; cols: number; data: Float64Array } {
  if (a.shape.length === 0) throw new DataFileError(inFile(file, `${what} is a scalar; give a vector or a matrix`), { file });
  const rows = a.shape[0];
  const cols = a.shape.length === 2 ? a.shape[1] : 1;
  if (rows === 0 || cols === 0) throw new DataFileError(inFile(file, `${what} is empty (shape [${a.shape.join(', ')}])`), { file });
  for (let k = 0; k < a.data.length; k++) {
    if (!Number.isFinite(a.data[k])) {
      throw new DataFileError(inFile(file, `${what}, row ${Math.floor(k / cols) + 1}, column ${k % cols}: ${a.data[k]} (missing or non-finite values are not accepted)`), { file, row: Math.floor(k / cols) + 1, column: String(k % cols) });
    }
  }
  return { rows, cols, data: a.data };
}

/** Picks columns of a matrix. */
function pick(m: { rows: number; cols: number; data: Float64Array }, cols: number[]): Float64Array {
  const out = new Float64Array(m.rows * cols.length);
  for (let i = 0; i < m.rows; i++) for (let k = 0; k < cols.length; k++) out[i * cols.length + k] = m.data[i * m.cols + cols[k]];
  return out;
}

/** Checks numeric targets of a classification loss. */
function checkNumericTargets(y: Float64Array, width: number, req: TableRequest, file: string): void {
  if (req.targetKind === 'value') return;
  if (width !== 1) throw new DataFileError(inFile(file, `a classification loss takes one target column, the targets have ${width}`), { file });
  y.forEach((v, i) => {
    if (req.targetKind === 'class' && !(Number.isInteger(v) && v >= 0)) throw new DataFileError(inFile(file, `target row ${i + 1}: class ${v} is not a non-negative integer index`), { file, row: i + 1 });
    if (req.targetKind === 'binary' && !(v >= 0 && v <= 1)) throw new DataFileError(inFile(file, `target row ${i + 1}: ${v} is outside [0, 1], which binary-cross-entropy needs`), { file, row: i + 1 });
  });
}

/** Two arrays (features, targets) into table data, checking that their rows agree. */
function fromArrays(xm: { rows: number; cols: number; data: Float64Array }, ym: { rows: number; cols: number; data: Float64Array }, req: TableRequest, file: string, reading: DataReading): TableData {
  if (xm.rows !== ym.rows) throw new DataFileError(inFile(file, `the features have ${xm.rows} rows but the targets ${ym.rows}`), { file });
  checkNumericTargets(ym.data, ym.cols, req, file);
  return { rows: xm.rows, inputs: xm.cols, targets: ym.cols, x: xm.data, y: ym.data, reading };
}

/**
 * Reads a `.npy` matrix: features and targets are columns of it, or the targets come from a
 * second `.npy` file (`targetBytes`).
 */
export function tableFromNpy(bytes: Uint8Array, file: string, req: TableRequest, target?: { bytes: Uint8Array; file: string }, limits: DataLimits = DEFAULT_LIMITS): TableData {
  if (req.classes !== undefined) throw new DataFileError(inFile(file, 'data.classes maps text labels, but a .npy file holds numbers only'), { file });
  const m = asMatrix(readNpy(bytes, file, limits), file, 'the array');
  if (target !== undefined) {
    const tm = asMatrix(readNpy(target.bytes, target.file, limits), target.file, 'the target array');
    const { features } = resolveColumns(req, null, m.cols, file, true);
    const xm = { rows: m.rows, cols: features.length, data: features.length === m.cols ? m.data : pick(m, features) };
    return fromArrays(xm, tm, req, file, { format: 'npy', featureColumns: features });
  }
  if (m.cols < 2) throw new DataFileError(inFile(file, `has one column, so it cannot hold both features and a target; give data.targetFile`), { file });
  const { features, targets } = resolveColumns(req, null, m.cols, file, false);
  const x = pick(m, features);
  const y = pick(m, targets);
  return fromArrays({ rows: m.rows, cols: features.length, data: x }, { rows: m.rows, cols: targets.length, data: y }, req, file, { format: 'npy', featureColumns: features, targetColumns: targets });
}

/** Reads features and targets from two arrays of a `.npz` archive (default names `x` and `y`). */
export function tableFromNpz(bytes: Uint8Array, file: string, req: TableRequest, limits: DataLimits = DEFAULT_LIMITS): TableData {
  if (req.classes !== undefined) throw new DataFileError(inFile(file, 'data.classes maps text labels, but a .npz archive holds numbers only'), { file });
  const fname = req.features ?? 'x';
  const tname = req.target ?? 'y';
  if (typeof fname !== 'string' || typeof tname !== 'string') throw new DataFileError(inFile(file, 'for a .npz archive, data.features and data.target name arrays in it (e.g. features: x, target: y)'), { file });
  const arrays = readNpz(bytes, file, [fname, tname], limits);
  const get = (name: string, key: string): NumericArray => {
    const a = arrays.get(name);
    if (a === undefined) throw new DataFileError(inFile(file, `has no array '${name}' (${key})`), { file, array: name });
    return a;
  };
  const xm = asMatrix(get(fname, 'data.features'), file, `array '${fname}'`);
  const ym = asMatrix(get(tname, 'data.target'), file, `array '${tname}'`);
  return fromArrays(xm, ym, req, file, { format: 'npz', featureArray: fname, targetArray: tname });
}

/** Reads a data file of any supported format (by its name's extension). */
export function readTable(bytes: Uint8Array, file: string, req: TableRequest, target?: { bytes: Uint8Array; file: string }, limits: DataLimits = DEFAULT_LIMITS): TableData {
  const format = formatOf(file);
  if (target !== undefined && format !== 'npy') throw new DataFileError(inFile(file, 'data.targetFile goes with a .npy feature file; a table names its target column with data.target'), { file });
  switch (format) {
    case 'csv':
      return tableFromCsv(bytes, file, req, limits);
    case 'npy':
      return tableFromNpy(bytes, file, req, target, limits);
    case 'npz':
      return tableFromNpz(bytes, file, req, limits);
    case 'parquet':
      return tableFromParquet(bytes, file, req, limits);
    default: {
      const never: never = format;
      throw new DataFileError(`unknown format ${String(never)}`);
    }
  }
}
