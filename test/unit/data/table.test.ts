/**
 * Choosing columns, mapping text labels to class indices and refusing missing values, on the
 * committed CSV / NumPy fixtures (expected numbers are the fixtures' own text, read by eye).
 */
import { readFileSync } from 'fs';
import { join } from 'path';
import { DataFileError, readTable, writeNpy, readNpy, writeSafetensors, readSafetensors, dataHash } from '../../../src/core/data';

const FIX = join(__dirname, '../../reference/data/fixtures');
const file = (n: string): Uint8Array => new Uint8Array(readFileSync(join(FIX, n)));

describe('CSV tables', () => {
  it('reads features by name and maps text labels to sorted class indices, keeping the mapping', () => {
    const t = readTable(file('header.csv'), 'header.csv', { features: ['temp', 'humidity'], target: 'label', targetKind: 'class' });
    expect(t.rows).toBe(4);
    expect(Array.from(t.x)).toEqual([21.5, 0.4, 23.0, 0.55, 19.25, 0.8, 22.0, 0.61]);
    expect(t.classes).toEqual(['dry', 'ok', 'wet']);
    expect(Array.from(t.y)).toEqual([0, 1, 2, 1]);
    expect(t.reading).toEqual({ format: 'csv', header: true, delimiter: ',', featureColumns: [0, 1], targetColumns: [2] });
  });
  it('takes the class order from data.classes', () => {
    const t = readTable(file('header.csv'), 'h.csv', { target: 'label', classes: ['wet', 'ok', 'dry'], targetKind: 'class' });
    expect(Array.from(t.y)).toEqual([2, 1, 0, 1]);
  });
  it('defaults to the last column as target and the rest as features; positions work without a header', () => {
    const t = readTable(file('no-header.csv'), 'n.csv', { targetKind: 'binary' });
    expect(t.inputs).toBe(2);
    expect(Array.from(t.y)).toEqual([0, 1, 1]);
    const u = readTable(file('no-header.csv'), 'n.csv', { features: [2], target: 0, targetKind: 'value' });
    expect(Array.from(u.x)).toEqual([0, 1, 1]);
    expect(Array.from(u.y)).toEqual([1, 3, 5]);
  });
  it('reads CRLF files with a byte-order mark and two text labels for binary cross-entropy', () => {
    const t = readTable(file('crlf-bom.csv'), 'c.csv', { targetKind: 'binary' });
    expect(Array.from(t.x)).toEqual([1.5, 2.5, 3.5]);
    expect(t.classes).toEqual(['cold', 'warm']);
    expect(Array.from(t.y)).toEqual([0, 1, 1]);
  });
  it.each<[string, string, string]>([
    ['missing-empty.csv', 'b', 'missing-empty.csv: row 3, column \'b\': missing value ""'],
    ['missing-na.csv', 'b', 'missing-na.csv: row 4, column \'b\': missing value "NA"'],
    ['text-in-feature.csv', 'b', 'text-in-feature.csv: row 3, column \'b\': "five" is not a number'],
  ])('refuses %s with row and column', (name, _col, message) => {
    expect(() => readTable(file(name), name, { targetKind: 'value' })).toThrow(new DataFileError(message));
  });
  it('names a missing column and lists the header', () => {
    expect(() => readTable(file('header.csv'), 'h.csv', { target: 'lable', targetKind: 'class' })).toThrow("h.csv: data.target names the column 'lable', which the header does not have (columns: temp, humidity, label)");
    expect(() => readTable(file('header.csv'), 'h.csv', { targetKind: 'value' })).toThrow('h.csv: row 2, column \'label\': "dry" is not a number (the loss is mse, so targets must be numeric)');
  });
});

describe('NumPy tables', () => {
  it('reads x and y from an npz archive', () => {
    const t = readTable(file('plain.npz'), 'p.npz', { targetKind: 'class' });
    expect([t.rows, t.inputs, t.targets]).toEqual([4, 2, 1]);
    expect(Array.from(t.y)).toEqual([0, 1, 1, 0]);
  });
  it('splits a .npy matrix into feature and target columns, or reads targets from a second file', () => {
    const m = readTable(file('m-f8-le-C.npy'), 'm.npy', { targetKind: 'value', target: [3] });
    expect(m.inputs).toBe(3);
    expect(Array.from(m.y)).toEqual([-0.5, 0.5, 1.5]);
    const targets = writeNpy(Float64Array.of(1, 2, 3), [3]);
    const s = readTable(file('m-i4-be-F.npy'), 'm.npy', { targetKind: 'value' }, { bytes: targets, file: 't.npy' });
    expect(s.inputs).toBe(4);
    expect(Array.from(s.x.subarray(0, 4))).toEqual([-5, -4, -3, -2]);
  });
});

describe('writers round-trip through the readers', () => {
  it('writeNpy / writeSafetensors', () => {
    const data = Float64Array.of(0.1, -2, 3e-310, 7);
    expect(Array.from(readNpy(writeNpy(data, [2, 2])).data)).toEqual(Array.from(data));
    const t = readSafetensors(writeSafetensors([{ name: '0.weight', shape: [2, 2], data }, { name: '0.bias', shape: [1], data: Float64Array.of(5) }], { source: 'x' }));
    expect(Array.from(t.get('0.weight')!.data)).toEqual(Array.from(data));
    expect(t.get('0.bias')!.shape).toEqual([1]);
  });
});

describe('data hash', () => {
  it('depends on the numbers and labels only', () => {
    const a = readTable(file('header.csv'), 'h.csv', { target: 'label', targetKind: 'class' });
    const b = readTable(file('header.csv'), 'h.csv', { target: 'label', classes: ['dry', 'ok', 'wet'], targetKind: 'class' });
    expect(dataHash(a, a.classes)).toBe(dataHash(b, b.classes));
    const c = readTable(file('header.csv'), 'h.csv', { target: 'label', classes: ['ok', 'dry', 'wet'], targetKind: 'class' });
    expect(dataHash(c, c.classes)).not.toBe(dataHash(a, a.classes));
    expect(dataHash(a, a.classes)).toMatch(/^[0-9a-f]{64}$/);
  });
});
