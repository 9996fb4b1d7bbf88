/**
 * The data and weights readers against files written by NumPy, Python's csv module, PyTorch and
 * the safetensors package (fixtures/ and expected.json, made by make_fixtures.py; header in
 * expected.json). Values must match exactly: every fixture value is exact in its dtype, and a
 * reader only widens to float64.
 */
import { readFileSync, readdirSync } from 'fs';
import { join } from 'path';
import { readCsv, readNpy, readNpz, readSafetensors, readWeights, DataFileError } from '../../../src/core/data';

const FIX = join(__dirname, 'fixtures');
const expected = JSON.parse(readFileSync(join(__dirname, 'expected.json'), 'utf8')) as Record<string, any>;
const bytes = (name: string): Uint8Array => new Uint8Array(readFileSync(join(FIX, name)));

const npyFiles = readdirSync(FIX).filter((f) => f.endsWith('.npy'));

// source: NumPy 2.4 numpy.save / numpy.lib.format.write_array (test/reference/data/make_fixtures.py)
describe('.npy files written by NumPy', () => {
  it('cover every numeric dtype in both byte orders and both memory orders', () => {
    expect(npyFiles.length).toBe(45); // 3 one-byte dtypes × 2 layouts + 9 wider dtypes × 2 byte orders × 2 layouts + a vector + versions 2 and 3
    const codes = new Set(npyFiles.filter((f) => f.startsWith('m-')).map((f) => f.split('-')[1]));
    expect([...codes].sort()).toEqual(['b1', 'f2', 'f4', 'f8', 'i1', 'i2', 'i4', 'i8', 'u1', 'u2', 'u4', 'u8']);
    expect(npyFiles.some((f) => f.includes('-be-F'))).toBe(true);
  });
  it.each(npyFiles)('%s', (name) => {
    const a = readNpy(bytes(name), name);
    expect(a.shape).toEqual(expected[name].shape);
    expect(Array.from(a.data)).toEqual(expected[name].values);
    expect(a.descr).toBe(expected[name].descr);
  });
});

// source: NumPy 2.4 numpy.savez / savez_compressed
describe('.npz archives written by NumPy', () => {
  it.each(['plain.npz', 'compressed.npz'])('%s', (name) => {
    const arrays = readNpz(bytes(name), name);
    for (const k of ['x', 'y']) {
      const a = arrays.get(k)!;
      expect(a.shape).toEqual(expected[name][k].shape);
      expect(Array.from(a.data)).toEqual(expected[name][k].values);
    }
  });
  it('reads only the members asked for', () => {
    expect([...readNpz(bytes('compressed.npz'), 'c', ['x']).keys()]).toEqual(['x']);
  });
});

// source: Python 3.11 csv.reader on the same bytes (make_fixtures.py)
describe('CSV edge cases match Python\'s csv module', () => {
  it.each(['header.csv', 'no-header.csv', 'quoted.csv', 'crlf-bom.csv', 'semicolon.csv', 'tab.tsv', 'missing-empty.csv', 'missing-na.csv', 'text-in-feature.csv'])('%s', (name) => {
    const t = readCsv(bytes(name), name, { header: false });
    expect(t.rows).toEqual(expected[name].rows);
  });
  it('detects the header row', () => {
    expect(readCsv(bytes('header.csv'), 'h').header).toEqual(['temp', 'humidity', 'label']);
    expect(readCsv(bytes('no-header.csv'), 'n').header).toBeNull();
    expect(readCsv(bytes('crlf-bom.csv'), 'c').header).toEqual(['temp', 'label']);
  });
  it('refuses ragged rows with the row number', () => {
    expect(() => readCsv(bytes('ragged.csv'), 'ragged.csv')).toThrow(new DataFileError('ragged.csv: row 3 has 2 fields, but row 1 has 3'));
  });
});

// source: PyTorch 2.13 nn.Sequential state_dict saved by safetensors 0.8 save_file (make_fixtures.py)
describe('safetensors files written by the safetensors package', () => {
  it.each(['sequential-f64.safetensors', 'sequential-f32.safetensors'])('%s', (name) => {
    const t = readSafetensors(bytes(name), name);
    const want = expected[name];
    expect([...t.keys()].sort()).toEqual(Object.keys(want).sort());
    expect(t.size).toBe(6);
    for (const [k, v] of t) {
      expect(v.shape).toEqual(want[k].shape);
      expect(Array.from(v.data)).toEqual(want[k].values);
    }
  });
  it.each(['sequential-f64.safetensors', 'state-dict.npz'])('maps %s to layers by order (0, 2, 4)', (name) => {
    const layers = readWeights(bytes(name), name, { inputs: 3, units: [5, 4, 2] });
    const want = expected[name];
    expect(layers.length).toBe(3);
    ['0', '2', '4'].forEach((p, k) => {
      expect(layers[k].weight.flat()).toEqual(want[`${p}.weight`].values);
      expect(layers[k].bias).toEqual(want[`${p}.bias`].values);
    });
  });
  it('names the layer and both shapes on a mismatch', () => {
    expect(() => readWeights(bytes('sequential-f64.safetensors'), 'init.safetensors', { inputs: 3, units: [5, 6, 2] })).toThrow(
      "init.safetensors: layer 1: '2.weight' has shape [4, 5], the model's layer 1 needs [6, 5] (units × fan-in)"
    );
    expect(() => readWeights(bytes('sequential-f64.safetensors'), 'init.safetensors', { inputs: 3, units: [5, 4] })).toThrow("init.safetensors: holds 3 layers ('0', '2', '4'), the model has 2");
  });
});
