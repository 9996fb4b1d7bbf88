/**
 * The parquet reader against files written by pyarrow 26.0.1 (fixtures/ and expected.json, made by
 * make_fixtures.py; what pyarrow reads back is the expected value). Every fixture value is exact
 * in its type, so the numbers must be equal.
 */
import { readFileSync } from 'fs';
import { join } from 'path';
import { DataFileError, readTable } from '../../../src/core/data';
import { openParquet } from '../../../src/core/data/parquet';
import { DEFAULT_LIMITS } from '../../../src/core/data/limits';

// source: pyarrow 26.0.1 (Apache Arrow's parquet writer and reader), via make_fixtures.py
const expected = JSON.parse(readFileSync(join(__dirname, 'expected.json'), 'utf8')) as Record<string, { rows: number; rowGroups: number; columns: Record<string, (number | boolean | string | null)[]>; codec: string }>;
const fixture = (name: string): Uint8Array => new Uint8Array(readFileSync(join(__dirname, 'fixtures', name)));
const asNumber = (v: number | boolean | string | null): number | string | null => (typeof v === 'boolean' ? (v ? 1 : 0) : v);

describe('parquet files written by pyarrow', () => {
  const readable = ['numeric.parquet', 'labels-snappy.parquet', 'labels-v1-pages.parquet', 'nulls.parquet'];
  it.each(readable)('%s: every column as pyarrow reads it back', (name) => {
    const want = expected[name];
    const t = openParquet(fixture(name), name, DEFAULT_LIMITS);
    expect(t.rows).toBe(want.rows);
    const names = Object.keys(want.columns);
    expect(names.length).toBeGreaterThan(0);
    expect([...t.names].sort()).toEqual([...names].sort());
    const cols = t.read(names.map((n) => t.names.indexOf(n)));
    expect(cols).toHaveLength(names.length);
    names.forEach((n, k) => expect(cols[k].values).toEqual(want.columns[n].map(asNumber)));
  });

  it('numeric.parquet spans two row groups, and int64 keeps 2^53 − 1 exactly', () => {
    expect(expected['numeric.parquet'].rowGroups).toBe(2);
    const t = readTable(fixture('numeric.parquet'), 'numeric.parquet', { target: 'celsius', targetKind: 'value' });
    expect(t.rows).toBe(8);
    expect(t.inputs).toBe(5);
    expect(t.reading).toEqual({ format: 'parquet', featureColumns: [0, 1, 2, 3, 4], targetColumns: [5] });
    const col = (j: number): number[] => Array.from({ length: 8 }, (_, i) => t.x[i * 5 + j]);
    expect(col(3)).toEqual(expected['numeric.parquet'].columns.load_kg);
    expect(col(3)[2]).toBe(9007199254740991);
    expect(Array.from(t.y)).toEqual(expected['numeric.parquet'].columns.celsius);
  });

  it('chooses feature and target columns by name or position, and maps text labels to classes as a CSV does', () => {
    const w = expected['labels-snappy.parquet'].columns;
    const t = readTable(fixture('labels-snappy.parquet'), 'labels-snappy.parquet', { features: ['celsius', 0], target: 'state', targetKind: 'class' });
    expect(t.rows).toBe(6);
    expect(t.classes).toEqual(['cold', 'ok', 'warm']);
    expect(Array.from(t.y)).toEqual(w.state.map((s) => ['cold', 'ok', 'warm'].indexOf(s as string)));
    expect(Array.from(t.x)).toEqual(w.celsius.flatMap((c, i) => [c as number, w.door_openings[i] as number]));
    const given = readTable(fixture('labels-v1-pages.parquet'), 'labels-v1-pages.parquet', { target: 2, classes: ['warm', 'ok', 'cold'], targetKind: 'class' });
    expect(Array.from(given.y)).toEqual(w.state.map((s) => ['warm', 'ok', 'cold'].indexOf(s as string)));
  });

  it.each([
    ['nulls.parquet', { target: 'b', targetKind: 'value' as const }, "nulls.parquet: row 3, column 'a': missing value (null)"],
    ['zstd.parquet', { target: 'celsius', targetKind: 'value' as const }, "zstd.parquet: column 'door_openings' is compressed with ZSTD, which Stepwell does not read; write the file uncompressed or with snappy (pyarrow: compression=\"snappy\")"],
    ['gzip.parquet', { target: 'celsius', targetKind: 'value' as const }, "gzip.parquet: column 'door_openings' is compressed with GZIP, which Stepwell does not read; write the file uncompressed or with snappy (pyarrow: compression=\"snappy\")"],
    ['timestamp.parquet', { target: 'celsius', targetKind: 'value' as const }, "timestamp.parquet: column 'at' holds INT64 / TIMESTAMP values, which Stepwell does not read; give numbers or text labels"],
    ['nested.parquet', { target: 'celsius', targetKind: 'value' as const }, "nested.parquet: column 'readings' is nested (a list or a struct); Stepwell reads flat columns of numbers or text"],
    ['labels-snappy.parquet', { target: 'state', targetKind: 'value' as const }, 'labels-snappy.parquet: row 1, column \'state\': "ok" is not a number (the loss is mse, so targets must be numeric)'],
    ['labels-snappy.parquet', { target: 'humidity', targetKind: 'value' as const }, "labels-snappy.parquet: data.target names the column 'humidity', which the header does not have (columns: door_openings, celsius, state)"]
  ])('%s: refused with a clear error (%#)', (name, req, message) => {
    expect(() => readTable(fixture(name), name, req)).toThrow(new DataFileError(message));
  });

  it('checks rows and columns against the limits from the footer, before decoding', () => {
    const bytes = fixture('numeric.parquet');
    expect(() => readTable(bytes, 'numeric.parquet', { target: 'celsius', targetKind: 'value' }, undefined, { ...DEFAULT_LIMITS, maxRows: 7 })).toThrow(new DataFileError('numeric.parquet: has 8 rows, above the limit of 7'));
    expect(() => readTable(bytes, 'numeric.parquet', { target: 'celsius', targetKind: 'value' }, undefined, { ...DEFAULT_LIMITS, maxColumns: 5 })).toThrow(new DataFileError('numeric.parquet: has 6 columns, above the limit of 5'));
    expect(() => readTable(bytes, 'numeric.parquet', { target: 'celsius', targetKind: 'value' }, undefined, { ...DEFAULT_LIMITS, maxValues: 39 })).toThrow(new DataFileError('numeric.parquet: holds 8×5 feature values, above the limit of 39'));
  });

  it('a file that is not parquet', () => {
    expect(() => readTable(new TextEncoder().encode('a,b\n1,2\n'), 'x.parquet', { targetKind: 'value' })).toThrow(DataFileError);
    expect(() => readTable(new TextEncoder().encode('PAR1 and then no footer at all PAR1'), 'x.parquet', { targetKind: 'value' })).toThrow(/x\.parquet: is not a readable parquet file/);
  });
});
