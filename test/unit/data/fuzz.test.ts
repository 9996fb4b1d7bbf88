/**
 * Fuzzing of every reader (fast-check, 10 000 runs each): on arbitrary bytes — and on valid files
 * with bytes flipped, cut or appended — a reader returns a value or throws DataFileError, never
 * anything else (no RangeError from a DataView, no TypeError, no hang). Valid files are the
 * committed fixtures written by NumPy / safetensors.
 */
import { readFileSync } from 'fs';
import { join } from 'path';
import fc from 'fast-check';
import { DataFileError, readCsv, readNpy, readNpz, readSafetensors, readTable, readWeights } from '../../../src/core/data';

const FIX = join(__dirname, '../../reference/data/fixtures');
const file = (n: string): Uint8Array => new Uint8Array(readFileSync(join(FIX, n)));
const RUNS = 10_000;

/** Runs `read` and fails on any exception that is not a DataFileError. */
function onlyTyped(read: (b: Uint8Array) => unknown): (b: Uint8Array) => boolean {
  return (b) => {
    try {
      read(b);
    } catch (e) {
      if (!(e instanceof DataFileError)) throw e;
    }
    return true;
  };
}

/** Arbitrary bytes, and mutations of a valid file: flipped bytes, a cut, appended bytes. */
function inputs(valid: Uint8Array): fc.Arbitrary<Uint8Array> {
  const mutated = fc.tuple(fc.array(fc.tuple(fc.nat(), fc.integer({ min: 0, max: 255 })), { maxLength: 6 }), fc.nat(), fc.uint8Array({ maxLength: 8 }), fc.boolean()).map(([flips, cut, extra, doCut]) => {
    const b = Uint8Array.from(valid);
    for (const [at, v] of flips) b[at % b.length] = v;
    const kept = doCut ? b.subarray(0, cut % (b.length + 1)) : b;
    const out = new Uint8Array(kept.length + extra.length);
    out.set(kept);
    out.set(extra, kept.length);
    return out;
  });
  return fc.oneof(fc.uint8Array({ maxLength: 200 }), mutated);
}

const READERS: [string, string, (b: Uint8Array) => unknown][] = [
  ['readNpy', 'm-f8-be-F.npy', (b) => readNpy(b, 'f.npy')],
  ['readNpy (v3)', 'version-3.npy', (b) => readNpy(b, 'f.npy')],
  ['readNpz', 'compressed.npz', (b) => readNpz(b, 'f.npz')],
  ['readCsv', 'quoted.csv', (b) => readCsv(b, 'f.csv')],
  ['readTable (csv, labels)', 'header.csv', (b) => readTable(b, 'f.csv', { targetKind: 'class', target: 'label' })],
  ['readTable (npz)', 'plain.npz', (b) => readTable(b, 'f.npz', { targetKind: 'value' })],
  ['readSafetensors', 'sequential-f32.safetensors', (b) => readSafetensors(b, 'f.safetensors')],
  ['readWeights', 'sequential-f64.safetensors', (b) => readWeights(b, 'f.safetensors', { inputs: 3, units: [5, 4, 2] })],
];

describe('readers throw only DataFileError (fast-check, 10 000 runs each)', () => {
  it.each(READERS)('%s', (_name, fixture, read) => {
    fc.assert(fc.property(inputs(file(fixture)), onlyTyped(read)), { numRuns: RUNS, seed: 20261203 });
  });
  it('CSV text of random fields and quotes', () => {
    const field = fc.oneof(fc.string({ maxLength: 6 }), fc.constantFrom('"', '""', ',', '\r\n', '\n', 'NA', '1e309', '-0', '\uFEFF'));
    const text = fc.array(fc.array(field, { minLength: 1, maxLength: 5 }), { minLength: 1, maxLength: 6 }).map((rows) => rows.map((r) => r.join(',')).join('\n'));
    fc.assert(fc.property(text, (t) => onlyTyped((b) => readTable(b, 'f.csv', { targetKind: 'binary' }))(new TextEncoder().encode(t))), { numRuns: RUNS, seed: 7 });
  });
});
