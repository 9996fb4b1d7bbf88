/**
 * Fuzzing of the readers' size limits (fast-check, 10 000 runs each): files whose headers declare
 * sizes far beyond the limits — .npy shapes up to 2⁴⁰, safetensors shapes, offsets and header
 * lengths up to 2⁵³, .npz members declaring gigabytes, CSV files with more rows or columns than
 * allowed — are refused with DataFileError (or read, when what they declare fits), and no reader
 * ever allocates memory in proportion to what a file declares: every typed array and ArrayBuffer
 * created while reading (the readers' own and fflate's) is recorded, and the largest stays below a
 * fixed bound while the declared sizes run to terabytes. Tight limits make the bound meaningful.
 *
 * The spy wraps the global constructors before the readers (and fflate, which keeps its own
 * references to them) are loaded, so it sees their allocations too.
 */
import fc from 'fast-check';
import type * as DataModule from '../../../src/core/data';
import type { DataLimits } from '../../../src/core/data/limits';
import type * as Fflate from 'fflate';

const RUNS = 10_000;
const LIMITS: DataLimits = { maxBytes: 4096, maxRows: 50, maxColumns: 8, maxValues: 200 };
/** Largest allocation allowed while reading under LIMITS: fflate's fixed inflate buffers and a few times maxBytes. */
// common practice (no single source): a bound independent of declared sizes, generous for fixed working buffers
const BOUND = 1 << 20;

let largest = 0;
const CTORS = ['ArrayBuffer', 'Uint8Array', 'Int8Array', 'Uint16Array', 'Int16Array', 'Uint32Array', 'Int32Array', 'Float32Array', 'Float64Array'] as const;
const originals = new Map<string, unknown>();
let data: typeof DataModule;

beforeAll(() => {
  const g = globalThis as unknown as Record<string, unknown>;
  for (const name of CTORS) {
    const C = g[name] as { BYTES_PER_ELEMENT?: number } & (new (...a: unknown[]) => unknown);
    originals.set(name, C);
    g[name] = new Proxy(C, {
      construct(target, args, newTarget) {
        if (typeof args[0] === 'number') largest = Math.max(largest, args[0] * (C.BYTES_PER_ELEMENT ?? 1));
        return Reflect.construct(target, args, newTarget) as object;
      }
    });
  }
  jest.isolateModules(() => {
    // eslint-disable-next-line @typescript-eslint/no-require-imports
    data = require('../../../src/core/data') as typeof DataModule;
  });
});

afterAll(() => {
  const g = globalThis as unknown as Record<string, unknown>;
  for (const [name, C] of originals) g[name] = C;
});

/** Reads with the spy reset; fails on any exception but DataFileError and on an allocation above BOUND. */
function boundedRead(read: () => unknown): boolean {
  largest = 0;
  try {
    read();
  } catch (e) {
    if (!(e instanceof data.DataFileError)) throw e;
  }
  if (largest > BOUND) throw new Error(`allocated ${largest} bytes (bound ${BOUND})`);
  return true;
}

const enc = (s: string): Uint8Array => new TextEncoder().encode(s);
const concat = (...parts: Uint8Array[]): Uint8Array => {
  const out = new Uint8Array(parts.reduce((n, p) => n + p.length, 0));
  let o = 0;
  for (const p of parts) {
    out.set(p, o);
    o += p.length;
  }
  return out;
};

/** A dimension: small, near a limit, or huge. */
const dim = fc.oneof(fc.integer({ min: 0, max: 12 }), fc.integer({ min: 40, max: 260 }), fc.integer({ min: 1000, max: 2 ** 40 }));

/** A .npy file whose header declares any shape and dtype, followed by a few bytes of data. */
const npyFile = fc
  .tuple(fc.constantFrom('<f8', '>f4', '<i8', '|u1', '<f2', '|b1', '>u4'), fc.boolean(), fc.array(dim, { minLength: 1, maxLength: 3 }), fc.uint8Array({ maxLength: 64 }))
  .map(([descr, fortran, shape, payload]) => {
    const dims = shape.length === 1 ? `(${shape[0]},)` : `(${shape.join(', ')})`;
    let dict = `{'descr': '${descr}', 'fortran_order': ${fortran ? 'True' : 'False'}, 'shape': ${dims}, }`;
    dict += ' '.repeat((64 - ((11 + dict.length) % 64)) % 64) + '\n';
    const head = new Uint8Array(10);
    head.set([0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59, 1, 0]);
    new DataView(head.buffer).setUint16(8, dict.length, true);
    return concat(head, enc(dict), payload);
  });

/** A safetensors file whose header declares any shapes, offsets and header length. */
const safetensorsFile = fc
  .tuple(
    fc.array(fc.tuple(fc.constantFrom('0.weight', '0.bias', '2.weight', '2.bias'), fc.constantFrom('F64', 'F32', 'F16', 'BF16', 'I64'), fc.array(dim, { maxLength: 3 }), fc.integer({ min: 0, max: 2 ** 53 }), fc.integer({ min: 0, max: 2 ** 53 })), { maxLength: 4 }),
    fc.oneof(fc.constant(-1), fc.integer({ min: 0, max: 2 ** 53 })),
    fc.uint8Array({ maxLength: 64 })
  )
  .map(([tensors, lie, payload]) => {
    const header: Record<string, unknown> = {};
    for (const [name, dtype, shape, a, b] of tensors) header[name] = { dtype, shape, data_offsets: [Math.min(a, b), Math.max(a, b)] };
    const json = enc(JSON.stringify(header));
    const len = new Uint8Array(8);
    const v = new DataView(len.buffer);
    const n = lie < 0 ? json.length : lie;
    v.setUint32(0, n % 2 ** 32, true);
    v.setUint32(4, Math.floor(n / 2 ** 32), true);
    return concat(len, json, payload);
  });

/** A .npz archive of one member whose ZIP records may declare any uncompressed size. */
function npzFile(fflate: typeof Fflate): fc.Arbitrary<Uint8Array> {
  return fc.tuple(npyFile, fc.boolean(), fc.option(fc.integer({ min: 0, max: 2 ** 32 - 1 }))).map(([npy, compress, lie]) => {
    const zip = fflate.zipSync({ 'x.npy': [npy, { level: compress ? 6 : 0 }] });
    if (lie !== null) {
      const v = new DataView(zip.buffer, zip.byteOffset, zip.byteLength);
      // source: PKWARE APPNOTE.TXT 6.3.10 §4.3.7 and §4.3.12 (uncompressed size at +22 of a local header, +24 of a central one)
      for (let i = 0; i + 4 <= zip.length; i++) {
        const sig = v.getUint32(i, true);
        if (sig === 0x04034b50 && i + 26 <= zip.length) v.setUint32(i + 22, lie, true);
        if (sig === 0x02014b50 && i + 28 <= zip.length) v.setUint32(i + 24, lie, true);
      }
    }
    return zip;
  });
}

/** A CSV text of `rows` rows of `cols` numeric fields (possibly over the limits). */
const csvFile = fc.tuple(fc.integer({ min: 1, max: 120 }), fc.integer({ min: 1, max: 20 }), fc.boolean()).map(([rows, cols, header]) => {
  const lines: string[] = header ? [Array.from({ length: cols }, (_, j) => `c${j}`).join(',')] : [];
  for (let r = 0; r < rows; r++) lines.push(Array.from({ length: cols }, (_, j) => String((r * 7 + j) % 11)).join(','));
  return enc(lines.join('\n'));
});

describe('readers refuse declared sizes beyond the limits before allocating (fast-check, 10 000 runs each)', () => {
  it('readNpy and readTable (npy) on headers declaring any shape', () => {
    fc.assert(fc.property(npyFile, (b) => boundedRead(() => data.readNpy(b, 'f.npy', LIMITS)) && boundedRead(() => data.readTable(b, 'f.npy', { targetKind: 'value' }, undefined, LIMITS))), { numRuns: RUNS, seed: 31 });
  });

  it('readSafetensors and readWeights on headers declaring any shapes, offsets and length', () => {
    fc.assert(fc.property(safetensorsFile, (b) => boundedRead(() => data.readSafetensors(b, 'f.safetensors', LIMITS)) && boundedRead(() => data.readWeights(b, 'f.safetensors', { inputs: 3, units: [4, 2] }, LIMITS))), { numRuns: RUNS, seed: 32 });
  });

  it('readNpz on archives whose members declare any size', () => {
    let fflate: typeof Fflate | undefined;
    jest.isolateModules(() => {
      // eslint-disable-next-line @typescript-eslint/no-require-imports
      fflate = require('fflate') as typeof Fflate;
    });
    fc.assert(fc.property(npzFile(fflate as typeof Fflate), (b) => boundedRead(() => data.readNpz(b, 'f.npz', undefined, LIMITS)) && boundedRead(() => data.readTable(b, 'f.npz', { targetKind: 'value', features: 'x', target: 'x' }, undefined, LIMITS))), { numRuns: RUNS, seed: 33 });
  });

  it('readCsv and readTable (csv) on files with more rows or columns than allowed', () => {
    let refused = 0;
    fc.assert(
      fc.property(csvFile, (b) => {
        try {
          data.readTable(b, 'f.csv', { targetKind: 'value' }, undefined, LIMITS);
        } catch (e) {
          if (e instanceof data.DataFileError) refused++;
        }
        return boundedRead(() => data.readCsv(b, 'f.csv', {}, LIMITS)) && boundedRead(() => data.readTable(b, 'f.csv', { targetKind: 'value' }, undefined, LIMITS));
      }),
      { numRuns: RUNS, seed: 34 }
    );
    // Most generated files break a limit (up to 120 rows and 20 columns against 50 and 8).
    expect(refused).toBeGreaterThan(RUNS / 2);
  });

  it('the spy sees the readers\' allocations (a file at the limits allocates its values)', () => {
    largest = 0;
    const arr = data.readNpy(data.writeNpy(new Float64Array(200), [25, 8]), 'f.npy', LIMITS);
    expect(arr.data.length).toBe(200);
    expect(largest).toBeGreaterThanOrEqual(200 * 8);
  });
});
