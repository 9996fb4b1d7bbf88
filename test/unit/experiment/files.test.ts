/**
 * Specs that name data and weights files: the experiment gets the file's numbers, the data hash
 * and the class mapping; every problem is a spec error at the key that named the file, with
 * line and column. Expected numbers are the fixtures' own text (test/reference/data/fixtures).
 */
import { readFileSync } from 'fs';
import { join } from 'path';
import { parseSpec, specFileNames, type SpecError } from '../../../src/experiment';
import { patchExperiment } from '../../../src/experiment/patch';
import { Session } from '../../../src/core/session/live';

const FIX = join(__dirname, '../../reference/data/fixtures');
const bytes = (n: string): Uint8Array => new Uint8Array(readFileSync(join(FIX, n)));
const files = new Map([
  ['sensors/header.csv', bytes('header.csv')],
  ['init.safetensors', bytes('sequential-f64.safetensors')],
  ['arrays.npz', bytes('plain.npz')],
]);

const CSV_SPEC = `seed: 3
model:
  inputs: 2
  layers: [{ units: 4, activation: tanh }, { units: 3 }]
data:
  file: sensors/header.csv
  features: [temp, humidity]
  target: label
loss: cross-entropy
recipe: { optimizer: adam, lr: 0.05 }
`;

function errors(text: string, f = files): SpecError[] {
  const r = parseSpec(text, 'auto', { files: f });
  if (r.ok) throw new Error('expected errors');
  return r.errors;
}

describe('data files in a spec', () => {
  it('lists the files to read', () => {
    expect(specFileNames({ data: { file: 'a.npy', targetFile: 'b.npy', heldOut: { file: 'c.npy' } }, model: { weights: { file: 'w.safetensors' } } })).toEqual(['a.npy', 'b.npy', 'c.npy', 'w.safetensors']);
  });
  it('reads a CSV with text labels into the experiment, with its hash and class mapping', () => {
    const r = parseSpec(CSV_SPEC, 'auto', { files });
    if (!r.ok) throw new Error(JSON.stringify(r.errors));
    const d = r.experiment.setup.data!;
    expect([d.rows, d.inputs, d.targets]).toEqual([4, 2, 1]);
    expect(Array.from(d.y)).toEqual([0, 1, 2, 1]);
    expect(d.origin!.classes).toEqual(['dry', 'ok', 'wet']);
    expect(d.origin!.files.map((f) => f.name)).toEqual(['sensors/header.csv']);
    expect(d.origin!.hash).toMatch(/^[0-9a-f]{64}$/);
    expect(d.origin!.files[0].sha256).toMatch(/^[0-9a-f]{64}$/);
    Session.create(r.experiment).step(2);
  });
  it('says where a CSV problem is: the key, line and column, the file, row and column', () => {
    const e = errors(CSV_SPEC.replace('target: label', 'target: temp\n  features: [humidity, label]').replace('  features: [temp, humidity]\n', ''));
    expect(e).toEqual([{ path: 'data.file', line: 6, col: 9, message: 'sensors/header.csv: row 2, column \'label\': "dry" is not a number' }]);
  });
  it('checks the data against the model', () => {
    const e = errors(CSV_SPEC.replace('inputs: 2', 'inputs: 3'));
    expect(e.map((x) => x.message)).toEqual(['the csv data have 2 feature columns, but model.inputs is 3']);
    const c = errors(CSV_SPEC.replace('{ units: 3 }', '{ units: 2 }'));
    expect(c.map((x) => x.message)).toEqual(['the data have 3 classes (dry, ok, wet), but the last layer has 2 units (one logit per class)']);
    expect(errors(CSV_SPEC.replace('lr: 0.05', 'lr: 0.05, batch: 9')).map((x) => x.message)).toEqual(['recipe.batch is 9, but sensors/header.csv has only 4 rows']);
  });
  it('reports a file the caller did not provide', () => {
    const e = errors(CSV_SPEC, new Map());
    expect(e[0].message).toBe('sensors/header.csv was not read: the file is missing or could not be fetched');
    const none = parseSpec(CSV_SPEC);
    expect(!none.ok && none.errors[0].message).toMatch(/this caller reads no files/);
  });
  it('refuses absolute paths and URLs', () => {
    expect(errors(CSV_SPEC.replace('file: sensors/header.csv', 'file: /etc/passwd'))[0].message).toMatch(/must be a path relative to the spec's folder/);
  });
  it('reads x and y of an .npz archive', () => {
    const r = parseSpec('model: { inputs: 2, layers: [{ units: 2 }] }\ndata: { file: arrays.npz }\nloss: cross-entropy\nseed: 1\n', 'auto', { files });
    expect(r.ok && Array.from(r.experiment.setup.data!.y)).toEqual([0, 1, 1, 0]);
  });
  it('a patch may point at another file', () => {
    const r = patchExperiment(CSV_SPEC, { 'data.file': 'missing.csv' }, { files });
    expect(!r.ok && r.errors[0].message).toBe("patch 'data.file': missing.csv was not read: the file is missing or could not be fetched");
  });
});

describe('initial weights from a file', () => {
  const SPEC = `seed: 1
model:
  inputs: 3
  layers: [{ units: 5, activation: tanh }, { units: 4, activation: tanh }, { units: 2 }]
  weights: { file: init.safetensors }
data: { x: [[1, 2, 3], [0, 1, 0]], y: [[1, 0], [0, 1]] }
`;
  it('maps a PyTorch Sequential state_dict to the layers', () => {
    const r = parseSpec(SPEC, 'auto', { files });
    if (!r.ok) throw new Error(JSON.stringify(r.errors));
    const m = r.experiment.setup.model;
    if (m.kind !== 'network') throw new Error('network expected');
    expect(m.weights!.length).toBe(3);
    expect(m.weightsOrigin!.name).toBe('init.safetensors');
    const want = JSON.parse(readFileSync(join(FIX, '../expected.json'), 'utf8'))['sequential-f64.safetensors'];
    const s = Session.create(r.experiment);
    expect(Array.from(s.parameters.subarray(0, 15))).toEqual(want['0.weight'].values); // source: torch state_dict written by make_fixtures.py
  });
  it('names the layer and both shapes on a mismatch, at the key', () => {
    const e = errors(SPEC.replace('{ units: 4, activation: tanh }', '{ units: 6, activation: tanh }'));
    expect(e).toEqual([{ path: 'model.weights.file', line: 5, col: 20, message: "init.safetensors: layer 1: '2.weight' has shape [4, 5], the model's layer 1 needs [6, 5] (units × fan-in)" }]);
  });
});
