/**
 * CSV reading with papaparse (RFC 4180 quoting, quoted delimiters and line breaks, doubled
 * quotes, CRLF or LF line ends, delimiter guessing). The bytes are decoded as UTF-8 (a byte-order
 * mark is dropped; invalid UTF-8 is refused), the size limits are checked before parsing and the
 * row limit bounds the parse itself, and ragged rows are refused with their row number.
 *
 * Header detection (`header: 'auto'`): the first row is a header when some column holds text in
 * the first row and a number in the second — the usual shape of a header over numeric data;
 * a file of one row is a header only if all its fields are text.
 */
import Papa from 'papaparse';
import { DataFileError, inFile } from './errors';
import { DEFAULT_LIMITS, type DataLimits } from './limits';

/** Options of {@link readCsv}. */
export interface CsvOptions {
  /** Field delimiter; guessed among , ; tab | when absent. */
  delimiter?: string;
  /** Whether the first row names the columns; `auto` detects it (module comment). Default auto. */
  header?: boolean | 'auto';
}

/** A parsed CSV table of text fields. */
export interface CsvTable {
  /** Column names, or null when the file has no header row. */
  header: string[] | null;
  /** Data rows (header excluded), every row as long as the first. */
  rows: string[][];
  /** File row number (1-based, header counted) of `rows[0]`. */
  firstRow: number;
  delimiter: string;
}

const NUMBER = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;
/** Text that spreadsheets and data tools write for a missing value. */
export const MISSING = new Set(['', 'na', 'n/a', 'nan', 'null', 'none', '?', '-', '#n/a']);

/** The number a field holds, or undefined when it is not a plain decimal number. */
export function parseNumber(field: string): number | undefined {
  const t = field.trim();
  if (!NUMBER.test(t)) return undefined;
  const v = Number(t);
  return Number.isFinite(v) ? v : undefined;
}

/** True when a field stands for a missing value (empty, NA, NaN, null, …). */
export function isMissing(field: string): boolean {
  return MISSING.has(field.trim().toLowerCase());
}

function looksLikeHeader(rows: string[][]): boolean {
  const first = rows[0];
  if (rows.length === 1) return first.every((f) => parseNumber(f) === undefined && !isMissing(f));
  const second = rows[1];
  return first.some((f, j) => parseNumber(f) === undefined && !isMissing(f) && second[j] !== undefined && parseNumber(second[j]) !== undefined);
}

/**
 * Parses CSV bytes into a table of text fields.
 * @throws DataFileError naming the file and row for undecodable text, broken quoting, ragged
 *   rows, an empty file or a file over the limits
 */
export function readCsv(bytes: Uint8Array, file?: string, options: CsvOptions = {}, limits: DataLimits = DEFAULT_LIMITS): CsvTable {
  if (bytes.length > limits.maxBytes) throw new DataFileError(inFile(file, `is ${bytes.length} bytes, above the limit of ${limits.maxBytes}`), { file });
  let text: string;
  try {
    text = new TextDecoder('utf-8', { fatal: true }).decode(bytes);
  } catch {
    throw new DataFileError(inFile(file, 'is not UTF-8 text'), { file });
  }
  if (text.charCodeAt(0) === 0xfeff) text = text.slice(1);
  const parsed = Papa.parse<string[]>(text, {
    delimiter: options.delimiter ?? '',
    delimitersToGuess: [',', ';', '\t', '|'],
    skipEmptyLines: true,
    preview: limits.maxRows + 2,
    header: false,
    dynamicTyping: false,
  });
  const bad = parsed.errors.find((e) => e.type === 'Quotes');
  if (bad) throw new DataFileError(inFile(file, `row ${(bad.row ?? 0) + 1}: ${bad.message.toLowerCase()}`), { file, row: (bad.row ?? 0) + 1 });
  const rows = parsed.data;
  if (rows.length === 0) throw new DataFileError(inFile(file, 'holds no rows'), { file });
  const width = rows[0].length;
  if (width > limits.maxColumns) throw new DataFileError(inFile(file, `has ${width} columns, above the limit of ${limits.maxColumns}`), { file });
  rows.forEach((r, i) => {
    if (r.length !== width) throw new DataFileError(inFile(file, `row ${i + 1} has ${r.length} fields, but row 1 has ${width}`), { file, row: i + 1 });
  });
  const header = options.header === undefined || options.header === 'auto' ? looksLikeHeader(rows) : options.header;
  const data = header ? rows.slice(1) : rows;
  if (data.length > limits.maxRows) throw new DataFileError(inFile(file, `has more than ${limits.maxRows} data rows, the limit`), { file });
  if (data.length === 0) throw new DataFileError(inFile(file, 'has a header but no data rows'), { file });
  return { header: header ? rows[0].map((h) => h.trim()) : null, rows: data, firstRow: header ? 2 : 1, delimiter: parsed.meta.delimiter };
}
