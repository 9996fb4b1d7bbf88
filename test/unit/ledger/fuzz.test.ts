/**
 * Property-based fuzzing (fast-check, 10 000 runs each) of the ledger decoder, the spec parser
 * and the `--set` / `--branch` parser: on arbitrary input each returns a value or a typed
 * problem (a result with errors, a LedgerError, a CliError), never another exception; and the
 * ledger codec's encode/decode round trip is the identity, bit for bit, on arbitrary states and
 * records (NaN payloads, ±0, ±∞, subnormals included). The counts are printed for README.
 */
import fc from 'fast-check';
import { decodeSessionState, decodeTrajectory, encodeSessionState, encodeTrajectory, LedgerError, openLedger, validateLedger } from '../../../src/ledger';
import { fingerprintState } from '../../../src/core/session';
import type { OptimizerName } from '../../../src/core/setup';
import type { SessionState, StepRecord } from '../../../src/core/state';
import { parseSpec, TEMPLATE_SPEC } from '../../../src/experiment';
import { parseAssignments, parsePatchText, splitAssignments } from '../../../src/experiment/patch';
import { branchExperiment } from '../../../src/worker/ledger-view';
import { parseBranch } from '../../../src/cli/run';
import { CliError } from '../../../src/cli/io';
import { sources } from './corruptions';

const RUNS = 10_000;
const counts: string[] = [];
afterAll(() => console.log(`fuzz runs: ${counts.join('; ')}`));

/** Any double, NaN payloads and -0 included (from raw bits). */
const anyDouble = fc.tuple(fc.integer({ min: 0, max: 0xffffffff }), fc.integer({ min: 0, max: 0xffffffff })).map(([hi, lo]) => {
  const v = new DataView(new ArrayBuffer(8));
  v.setUint32(0, hi);
  v.setUint32(4, lo);
  return v.getFloat64(0);
});
const bits = (x: number): string => {
  const v = new DataView(new ArrayBuffer(8));
  v.setFloat64(0, x);
  return `${v.getUint32(0)}:${v.getUint32(4)}`;
};
/** Equal bytes (reading a NaN into a JavaScript number may quiet it; the bytes are what the codec keeps). */
const sameBytes = (a: Float64Array, b: Float64Array): boolean => {
  const x = new Uint8Array(a.buffer, a.byteOffset, a.byteLength);
  const y = new Uint8Array(b.buffer, b.byteOffset, b.byteLength);
  return x.length === y.length && x.every((v, i) => v === y[i]);
};
const sameBits = (a: ArrayLike<number>, b: ArrayLike<number>): boolean => a.length === b.length && Array.from(a).every((x, i) => bits(x) === bits(b[i]));

const KINDS: OptimizerName[] = ['sgd', 'adagrad', 'rmsprop', 'adam', 'adamw', 'lbfgs', 'cg', 'newton', 'gauss-newton', 'minibatch-lbfgs'];
const key = fc.stringMatching(/^[a-zA-Z][a-zA-Z0-9_.]{0,8}$/);
const stateArb = (p: number): fc.Arbitrary<SessionState> =>
  fc.record({
    step: fc.nat({ max: 1e9 }),
    params: fc.array(anyDouble, { minLength: p, maxLength: p }).map((a) => Float64Array.from(a)),
    optimizer: fc.record({
      kind: fc.constantFrom(...KINDS),
      t: fc.nat({ max: 1e9 }),
      buffers: fc.dictionary(key, fc.array(anyDouble, { maxLength: 6 }).map((a) => Float64Array.from(a)), { maxKeys: 3 }),
      scalars: fc.dictionary(key, anyDouble, { maxKeys: 3 })
    }),
    rng: fc.record({
      s: fc.tuple(fc.integer({ min: 1, max: 0xffffffff }), fc.integer({ min: 0, max: 0xffffffff }), fc.integer({ min: 0, max: 0xffffffff }), fc.integer({ min: 0, max: 0xffffffff })),
      spare: fc.option(fc.double({ noNaN: true, noDefaultInfinity: true }), { nil: null })
    }),
    epoch: fc.nat(),
    cursor: fc.nat(),
    order: fc.option(fc.array(fc.integer({ min: -(2 ** 31), max: 2 ** 31 - 1 }), { maxLength: 8 }).map((a) => Int32Array.from(a)), { nil: null })
  });

describe('ledger codec', () => {
  it(`round trip of session states is the identity (${RUNS} runs)`, () => {
    fc.assert(
      fc.property(fc.integer({ min: 0, max: 6 }).chain(stateArb), (s) => {
        const back = decodeSessionState(JSON.parse(JSON.stringify(encodeSessionState(s))), 'state', s.params.length);
        expect(sameBytes(back.params, s.params)).toBe(true);
        expect(Object.keys(back.optimizer.buffers).sort()).toEqual(Object.keys(s.optimizer.buffers).sort());
        for (const k of Object.keys(s.optimizer.buffers)) expect(sameBytes(back.optimizer.buffers[k], s.optimizer.buffers[k])).toBe(true);
        for (const k of Object.keys(s.optimizer.scalars)) expect(bits(back.optimizer.scalars[k])).toBe(bits(s.optimizer.scalars[k]));
        expect(fingerprintState(back)).toBe(fingerprintState(s));
        return true;
      }),
      { numRuns: RUNS, seed: 20261207 }
    );
    counts.push(`session-state round trip ${RUNS}`);
  });

  it(`round trip of trajectories is the identity (${RUNS} runs)`, () => {
    const record = (layers: number): fc.Arbitrary<Omit<StepRecord, 'step'>> =>
      fc.record({
        loss: anyDouble, batchLoss: anyDouble, gradNorm: anyDouble, updateNorm: anyDouble, lr: anyDouble, evaluations: anyDouble, ms: anyDouble,
        layers: fc.array(fc.record({ weightNorm: anyDouble, gradNorm: anyDouble, updateRatio: anyDouble }), { minLength: layers, maxLength: layers }).map((ls) => ls.map((l, layer) => ({ layer, ...l })))
      });
    fc.assert(
      fc.property(fc.integer({ min: 0, max: 2 }).chain((layers) => fc.array(record(layers), { maxLength: 5 })), (rows) => {
        const records: StepRecord[] = rows.map((r, i) => ({ ...r, step: i * 3 }));
        const back = decodeTrajectory(JSON.parse(JSON.stringify(encodeTrajectory(records))));
        expect(back.length).toBe(records.length);
        back.forEach((r, i) => {
          for (const c of ['loss', 'batchLoss', 'gradNorm', 'updateNorm', 'lr', 'evaluations', 'ms'] as const) expect(bits(r[c])).toBe(bits(records[i][c]));
          expect(sameBits(r.layers.map((l) => l.updateRatio), records[i].layers.map((l) => l.updateRatio))).toBe(true);
        });
        return true;
      }),
      { numRuns: RUNS, seed: 20261208 }
    );
    counts.push(`trajectory round trip ${RUNS}`);
  });

  it(`decoding arbitrary JSON only ever throws LedgerError (${RUNS} runs)`, () => {
    fc.assert(
      fc.property(fc.jsonValue({ maxDepth: 4 }), (v) => {
        for (const decode of [() => decodeSessionState(v, 'state'), () => decodeTrajectory(v)]) {
          try {
            decode();
          } catch (e) {
            if (!(e instanceof LedgerError)) throw e;
          }
        }
        return true;
      }),
      { numRuns: RUNS, seed: 20261209 }
    );
    counts.push(`decoder on arbitrary JSON ${RUNS}`);
  });

  it(`opening mutated real ledgers never throws, and refuses or accepts whole (${RUNS} runs)`, () => {
    const reals = sources().map((s) => JSON.stringify(s.raw));
    expect(reals.length).toBe(4);
    // Mutations: a value somewhere replaced by arbitrary JSON (path chosen by the generated indices).
    const mutate = (text: string, picks: number[], value: unknown): unknown => {
      const root = JSON.parse(text) as unknown;
      let node = root as Record<string, unknown> | unknown[];
      for (let d = 0; d < picks.length; d++) {
        const keys = Object.keys(node);
        if (keys.length === 0) break;
        const k = keys[picks[d] % keys.length];
        const child = (node as Record<string, unknown>)[k];
        if (d === picks.length - 1 || typeof child !== 'object' || child === null) {
          (node as Record<string, unknown>)[k] = value;
          break;
        }
        node = child as Record<string, unknown>;
      }
      return root;
    };
    const maker = branchExperiment();
    fc.assert(
      fc.property(fc.nat({ max: 3 }), fc.array(fc.nat(), { minLength: 1, maxLength: 7 }), fc.jsonValue({ maxDepth: 2 }), (which, picks, value) => {
        const v = mutate(reals[which], picks, value);
        const r = openLedger(v, maker);
        if (!r.ok) expect(r.problems.length).toBeGreaterThan(0);
        return true;
      }),
      { numRuns: RUNS, seed: 20261210 }
    );
    counts.push(`opener on mutated real ledgers ${RUNS}`);
    expect(validateLedger(JSON.parse(reals[0])).ok).toBe(true);
  });
});

describe('spec parser and patch parsers', () => {
  it(`parseSpec never throws on arbitrary text or mutated specs (${RUNS} runs)`, () => {
    const mutated = fc.tuple(fc.nat(), fc.nat({ max: 40 }), fc.string({ maxLength: 12 })).map(([at, cut, insert]) => {
      const i = at % TEMPLATE_SPEC.length;
      return TEMPLATE_SPEC.slice(0, i) + insert + TEMPLATE_SPEC.slice(i + cut);
    });
    fc.assert(
      fc.property(fc.oneof(fc.string({ maxLength: 200 }), fc.json({ maxDepth: 4 }), mutated), (text) => {
        const r = parseSpec(text);
        if (!r.ok) {
          expect(r.errors.length).toBeGreaterThan(0);
          for (const e of r.errors) expect(typeof e.message).toBe('string');
        }
        return true;
      }),
      { numRuns: RUNS, seed: 20261211 }
    );
    counts.push(`spec parser ${RUNS}`);
  });

  it(`--set / --branch / branch-form parsers return problems, never throw anything else (${RUNS} runs)`, () => {
    const text = fc.oneof(fc.string({ maxLength: 60 }), fc.constantFrom('lr=0.1', '__proto__=1', 'layers[0].units=3', '40:lr=0.02,momentum=0.9', 'lr=.nan', 'a=[1,2', 'x: *a'));
    fc.assert(
      fc.property(fc.array(text, { maxLength: 4 }), text, (list, one) => {
        parseAssignments(list);
        splitAssignments(one);
        parsePatchText(one);
        try {
          parseBranch(one);
        } catch (e) {
          if (!(e instanceof CliError)) throw e;
        }
        return true;
      }),
      { numRuns: RUNS, seed: 20261212 }
    );
    counts.push(`--set/--branch/patch parsers ${RUNS}`);
  });
});
