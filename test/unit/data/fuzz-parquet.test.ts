/**
 * Fuzzing of the parquet reader (fast-check, 10 000 runs each), as the other readers are fuzzed
 * (fuzz.test.ts): on arbitrary bytes and on pyarrow-written files with bytes flipped, cut or
 * appended, it returns a table or throws DataFileError — never another error, never a hang.
 * hyparquet's own exceptions must be turned into DataFileError by the reader.
 */
import { readFileSync } from 'fs';
import { join } from 'path';
import fc from 'fast-check';
import { DataFileError, readTable } from '../../../src/core/data';

const FIX = join(__dirname, '../../reference/parquet/fixtures');
const file = (n: string): Uint8Array => new Uint8Array(readFileSync(join(FIX, n)));
const RUNS = 10_000;

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

/** Arbitrary bytes with the parquet magic at both ends, and mutations of a valid file. */
function inputs(valid: Uint8Array): fc.Arbitrary<Uint8Array> {
  const magic = new TextEncoder().encode('PAR1');
  const framed = fc.uint8Array({ maxLength: 200 }).map((mid) => Uint8Array.from([...magic, ...mid, ...magic]));
  const mutated = fc.tuple(fc.array(fc.tuple(fc.nat(), fc.integer({ min: 0, max: 255 })), { maxLength: 6 }), fc.nat(), fc.uint8Array({ maxLength: 8 }), fc.boolean()).map(([flips, cut, extra, doCut]) => {
    const b = Uint8Array.from(valid);
    for (const [at, v] of flips) b[at % b.length] = v;
    const kept = doCut ? b.subarray(0, cut % (b.length + 1)) : b;
    const out = new Uint8Array(kept.length + extra.length);
    out.set(kept);
    out.set(extra, kept.length);
    return out;
  });
  return fc.oneof(fc.uint8Array({ maxLength: 200 }), framed, mutated);
}

const CASES: [string, Parameters<typeof readTable>[2]][] = [
  ['numeric.parquet', { target: 'celsius', targetKind: 'value' }],
  ['labels-snappy.parquet', { target: 'state', targetKind: 'class' }],
  ['nulls.parquet', { targetKind: 'value' }],
];

describe('the parquet reader throws only DataFileError (fast-check, 10 000 runs each)', () => {
  it.each(CASES)('%s', (name, req) => {
    expect(() => readTable(file(name), name, req)).not.toThrow(TypeError);
    fc.assert(fc.property(inputs(file(name)), onlyTyped((b) => readTable(b, name, req))), { numRuns: RUNS, seed: 20261203 });
  });
});
