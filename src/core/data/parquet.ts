/**
 * Parquet data files through hyparquet (MIT): its metadata parser and its column-chunk decoder,
 * called synchronously on the bytes in memory (hyparquet's `parquetRead` is asynchronous; the
 * spec layer reads files synchronously). Flat columns only: numbers (INT32, INT64, FLOAT,
 * DOUBLE, BOOLEAN as 0/1, DECIMAL) and text (UTF-8 BYTE_ARRAY) — text features are parsed as
 * numbers as in a CSV, a text target is a class label. Compression: none or snappy.
 *
 * Limits (rows, columns, values, and the decoded size of the chosen columns) are checked from the
 * footer before any column is decoded. Every failure, hyparquet's own included, ends as a
 * {@link DataFileError}.
 */
import { parquetMetadata, parquetSchema, snappyUncompress } from 'hyparquet';
import type { ColumnMetaData, CompressionCodec, DecodedArray, FileMetaData, SchemaTree } from 'hyparquet';
import { readColumn } from 'hyparquet/src/column.js';
import { DEFAULT_PARSERS } from 'hyparquet/src/convert.js';
import { DataFileError, inFile } from './errors';
import type { DataLimits } from './limits';

/** One column read from a parquet file: numbers, or text (nulls kept as null). */
export type ParquetColumn = { kind: 'number'; values: (number | null)[] } | { kind: 'text'; values: (string | null)[] };

/** The footer of a parquet file: column names (flat leaves) and the row count. */
export interface ParquetTable {
  names: string[];
  rows: number;
  /** Reads the named columns (indices into `names`), in full. */
  read(columns: readonly number[]): ParquetColumn[];
}

const SUPPORTED: ReadonlySet<CompressionCodec> = new Set(['UNCOMPRESSED', 'SNAPPY']);

/** Runs a hyparquet call, turning whatever it throws into a DataFileError naming the file. */
function guarded<T>(file: string, what: string, fn: () => T): T {
  try {
    return fn();
  } catch (e) {
    if (e instanceof DataFileError) throw e;
    throw new DataFileError(inFile(file, `is not a readable parquet file (${what}: ${e instanceof Error ? e.message : String(e)})`), { file });
  }
}

const big = (v: bigint | number | undefined): number => (v === undefined ? 0 : Number(v));

/** The type a column holds, as a person reads it (for errors). */
function typeName(t: SchemaTree): string {
  const e = t.element;
  const logical = e.logical_type?.type;
  return [e.type ?? 'group', logical ?? e.converted_type].filter((x) => x !== undefined).join(' / ');
}

/** Why a leaf column cannot be read as numbers or text, or null when it can. */
function unsupportedType(t: SchemaTree): string | null {
  const e = t.element;
  const logical = e.logical_type?.type;
  const converted = e.converted_type;
  if (['DATE', 'TIME', 'TIMESTAMP', 'INTERVAL', 'UUID', 'FLOAT16', 'JSON', 'BSON', 'VARIANT', 'GEOMETRY', 'GEOGRAPHY'].includes(logical ?? '')) return typeName(t);
  if (['DATE', 'TIME_MILLIS', 'TIME_MICROS', 'TIMESTAMP_MILLIS', 'TIMESTAMP_MICROS', 'INTERVAL', 'JSON', 'BSON'].includes(converted ?? '')) return typeName(t);
  switch (e.type) {
    case 'BOOLEAN':
    case 'INT32':
    case 'INT64':
    case 'FLOAT':
    case 'DOUBLE':
      return null;
    case 'BYTE_ARRAY':
    case 'FIXED_LEN_BYTE_ARRAY':
      return converted === 'UTF8' || logical === 'STRING' || logical === 'ENUM' || converted === 'DECIMAL' || logical === 'DECIMAL' ? null : `${typeName(t)} (binary)`;
    default:
      return typeName(t);
  }
}

/** Values of one decoded column as numbers or text; anything else is refused with its row. */
function columnValues(chunks: DecodedArray[], name: string, type: string, file: string): ParquetColumn {
  const out: (number | string | null)[] = [];
  let text = false;
  for (const chunk of chunks) {
    for (let i = 0; i < chunk.length; i++) {
      const v: unknown = chunk[i];
      if (v === null || v === undefined) out.push(null);
      else if (typeof v === 'number') out.push(v);
      else if (typeof v === 'bigint') out.push(Number(v));
      else if (typeof v === 'boolean') out.push(v ? 1 : 0);
      else if (typeof v === 'string') {
        text = true;
        out.push(v);
      } else throw new DataFileError(inFile(file, `column '${name}' holds ${type} values, which Stepwell does not read (row ${out.length + 1}); give numbers or text labels`), { file, column: name, row: out.length + 1 });
    }
  }
  if (text) {
    if (out.some((v) => typeof v === 'number')) throw new DataFileError(inFile(file, `column '${name}' mixes numbers and text`), { file, column: name });
    return { kind: 'text', values: out as (string | null)[] };
  }
  return { kind: 'number', values: out as (number | null)[] };
}

/**
 * Opens a parquet file: parses the footer, checks the limits that can be checked there (rows,
 * columns), and returns a reader of flat columns.
 * @throws DataFileError for a file that is not parquet, nested columns, or a limit exceeded.
 */
export function openParquet(bytes: Uint8Array, file: string, limits: DataLimits): ParquetTable {
  if (bytes.length > limits.maxBytes) throw new DataFileError(inFile(file, `has ${bytes.length} bytes, above the limit of ${limits.maxBytes}`), { file });
  if (bytes.length < 12) throw new DataFileError(inFile(file, `is not a parquet file (${bytes.length} bytes; a parquet file starts and ends with PAR1)`), { file });
  const buffer = bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength) as ArrayBuffer;
  const meta: FileMetaData = guarded(file, 'footer', () => parquetMetadata(buffer));
  const tree: SchemaTree = guarded(file, 'schema', () => parquetSchema(meta));
  const rows = big(meta.num_rows);
  if (!(rows >= 1)) throw new DataFileError(inFile(file, 'has no rows'), { file });
  if (rows > limits.maxRows) throw new DataFileError(inFile(file, `has ${rows} rows, above the limit of ${limits.maxRows}`), { file });
  if (tree.children.length > limits.maxColumns) throw new DataFileError(inFile(file, `has ${tree.children.length} columns, above the limit of ${limits.maxColumns}`), { file });
  const nested = tree.children.find((c) => c.children.length > 0 || c.element.repetition_type === 'REPEATED');
  const names = tree.children.map((c) => c.element.name);
  const groups = meta.row_groups;
  const groupRows = groups.reduce((s, g) => s + big(g.num_rows), 0);
  if (groupRows !== rows) throw new DataFileError(inFile(file, `is damaged: its row groups hold ${groupRows} rows, its footer says ${rows}`), { file });
  return {
    names,
    rows,
    read(columns) {
      // everything is checked from the footer before a single page is decoded
      let decoded = 0;
      const metas: ColumnMetaData[][] = columns.map((j) => {
        const leaf = tree.children[j];
        if (leaf === nested || leaf.children.length > 0 || leaf.element.repetition_type === 'REPEATED') throw new DataFileError(inFile(file, `column '${names[j]}' is nested (a list or a struct); Stepwell reads flat columns of numbers or text`), { file, column: names[j] });
        const bad = unsupportedType(leaf);
        if (bad !== null) throw new DataFileError(inFile(file, `column '${names[j]}' holds ${bad} values, which Stepwell does not read; give numbers or text labels`), { file, column: names[j] });
        return groups.map((g, k) => {
          const m = g.columns.find((c) => c.meta_data?.path_in_schema.length === 1 && c.meta_data.path_in_schema[0] === names[j])?.meta_data;
          if (m === undefined) throw new DataFileError(inFile(file, `is damaged: row group ${k + 1} has no data for column '${names[j]}'`), { file, column: names[j] });
          if (!SUPPORTED.has(m.codec)) throw new DataFileError(inFile(file, `column '${names[j]}' is compressed with ${m.codec}, which Stepwell does not read; write the file uncompressed or with snappy (pyarrow: compression="snappy")`), { file, column: names[j] });
          decoded += big(m.total_uncompressed_size);
          return m;
        });
      });
      const cap = Math.max(limits.maxBytes, 8 * limits.maxValues);
      if (decoded > cap) throw new DataFileError(inFile(file, `the chosen columns decode to ${decoded} bytes, above the limit of ${cap}`), { file });
      return columns.map((j, n) => {
        const leaf = tree.children[j];
        const chunks: DecodedArray[] = [];
        let groupStart = 0;
        metas[n].forEach((m, k) => {
          const groupRowCount = big(groups[k].num_rows);
          const start = big(m.dictionary_page_offset ?? m.data_page_offset);
          const end = start + big(m.total_compressed_size);
          if (!(start >= 0 && end <= bytes.length && start < end)) throw new DataFileError(inFile(file, `is damaged: column '${names[j]}' points outside the file`), { file, column: names[j] });
          const size = big(m.total_uncompressed_size);
          const decoder = {
            pathInSchema: m.path_in_schema,
            type: m.type,
            element: leaf.element,
            schemaPath: [tree, leaf],
            codec: m.codec,
            parsers: DEFAULT_PARSERS,
            utf8: true,
            // snappy output is allocated by the page header's size: bounded by the chunk's declared size
            compressors: {
              SNAPPY: (input: Uint8Array, length: number): Uint8Array => {
                if (!(length >= 0 && length <= size)) throw new DataFileError(inFile(file, `is damaged: a page of column '${names[j]}' claims ${length} bytes, more than its column chunk (${size})`), { file, column: names[j] });
                const out = new Uint8Array(length);
                snappyUncompress(input, out);
                return out;
              },
            },
          };
          const reader = { view: new DataView(buffer, start, end - start), offset: 0 };
          const r = guarded(file, `column '${names[j]}'`, () => readColumn(reader, { groupStart, selectStart: 0, selectEnd: groupRowCount, groupRows: groupRowCount }, decoder));
          chunks.push(...r.data);
          groupStart += groupRowCount;
        });
        const col = columnValues(chunks, names[j], typeName(leaf), file);
        if (col.values.length !== rows) throw new DataFileError(inFile(file, `is damaged: column '${names[j]}' holds ${col.values.length} values for ${rows} rows`), { file, column: names[j] });
        return col;
      });
    },
  };
}
