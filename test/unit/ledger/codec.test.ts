/** Session states, scalars and trajectories survive encode → JSON text → decode bit for bit. */
import { fingerprintState } from '../../../src/core/session';
import { decodeScalar, decodeSessionState, decodeTrajectory, encodeScalar, encodeSessionState, encodeTrajectory } from '../../../src/ledger';
import { bits, P, payloadNaN, record, state } from './fixtures';

const viaJson = <T>(v: T): unknown => JSON.parse(JSON.stringify(v));

describe('scalars', () => {
  it.each<[string, number]>([
    ['zero', 0], ['minus zero', -0], ['NaN', NaN], ['NaN with payload', payloadNaN()], ['+Infinity', Infinity], ['-Infinity', -Infinity],
    ['a third', 1 / 3], ['max', Number.MAX_VALUE], ['subnormal', -Number.MIN_VALUE],
  ])('%s round-trips bit for bit through JSON', (_n, x) => {
    const back = decodeScalar(viaJson(encodeScalar(x)), 's');
    expect(bits(Float64Array.of(back))).toEqual(bits(Float64Array.of(x)));
  });
  it('finite values stay plain JSON numbers; others are bit strings', () => {
    expect(encodeScalar(0.1)).toBe(0.1);
    // from memory: IEEE 754 binary64 +Infinity is 0x7FF0000000000000, -0 is 0x8000000000000000
    expect(encodeScalar(Infinity)).toBe('f64:7ff0000000000000');
    expect(encodeScalar(-0)).toBe('f64:8000000000000000');
  });
  it.each([['f64:xyz'], ['NaN'], [null], [true]])('rejects %j', (v) => {
    expect(() => decodeScalar(v, 'optimizer.scalars.fill')).toThrow(/^optimizer\.scalars\.fill: expected a number or "f64:"/);
  });
});

describe('session states', () => {
  it.each([
    ['with a row order', state(6)],
    ['without a row order', state(7, { order: false })],
  ])('round-trip exactly (%s)', (_n, s) => {
    const back = decodeSessionState(viaJson(encodeSessionState(s)), 'state', P);
    expect(bits(back.params)).toEqual(bits(s.params));
    for (const k of Object.keys(s.optimizer.buffers)) expect(bits(back.optimizer.buffers[k])).toEqual(bits(s.optimizer.buffers[k]));
    expect(Object.keys(back.optimizer.scalars)).toEqual(Object.keys(s.optimizer.scalars));
    for (const k of Object.keys(s.optimizer.scalars))
      expect(bits(Float64Array.of(back.optimizer.scalars[k]))).toEqual(bits(Float64Array.of(s.optimizer.scalars[k])));
    expect(back.rng).toEqual(s.rng);
    expect(back.order === null ? null : Array.from(back.order)).toEqual(s.order === null ? null : Array.from(s.order));
    expect([back.step, back.epoch, back.cursor, back.optimizer.kind, back.optimizer.t]).toEqual([s.step, s.epoch, s.cursor, s.optimizer.kind, s.optimizer.t]);
    expect(fingerprintState(back)).toBe(fingerprintState(s));
  });

  it.each<[string, (e: Record<string, any>) => void, string]>([
    ['unknown optimizer', (e) => (e.optimizer.kind = 'adamm'), 'st.optimizer.kind: expected one of sgd,'],
    ['negative step', (e) => (e.step = -1), 'st.step: expected an integer from 0 to'],
    ['rng word too large', (e) => (e.rng.s[2] = 2 ** 32), 'st.rng.s[2]: expected an integer from 0 to 4294967295, got 4294967296'],
    ['rng of 3 words', (e) => e.rng.s.pop(), 'st.rng.s: expected a list of 4 unsigned 32-bit integers'],
    ['bad buffer', (e) => (e.optimizer.buffers.m = 'AAA'), 'st.optimizer.buffers.m: base64 length 3 is not a multiple of 4'],
    ['bad scalar', (e) => (e.optimizer.scalars.fill = 'three'), 'st.optimizer.scalars.fill: expected a number or "f64:" + 16 hex digits, got "three"'],
    ['params too short', (e) => (e.params = e.optimizer.buffers.m.slice(0, 12)), 'st.params: decodes to 9 bytes, not a multiple of 8 (float64)'],
    ['missing optimizer', (e) => delete e.optimizer, 'st.optimizer: expected an object, got undefined'],
  ])('decode rejects %s', (_n, mutate, message) => {
    const e = viaJson(encodeSessionState(state(2))) as Record<string, any>;
    mutate(e);
    expect(() => decodeSessionState(e, 'st', P)).toThrow(message);
  });

  it('decode checks the parameter count', () => {
    expect(() => decodeSessionState(viaJson(encodeSessionState(state(1))), 'head.state', 4)).toThrow('head.state.params: holds 5 numbers, expected 4');
  });
});

describe('trajectories', () => {
  it.each([
    ['with held-out loss', true],
    ['without held-out loss', false],
  ])('round-trip exactly (%s)', (_n, held) => {
    const records = [0, 1, 2, 3, 5, 8].map((s) => record(s, held));
    const back = decodeTrajectory(viaJson(encodeTrajectory(records)));
    expect(back).toHaveLength(records.length);
    back.forEach((r, i) => {
      const want = records[i];
      for (const k of ['step', 'loss', 'batchLoss', 'gradNorm', 'updateNorm', 'lr', 'evaluations', 'ms'] as const)
        expect(bits(Float64Array.of(r[k]))).toEqual(bits(Float64Array.of(want[k])));
      expect(r.heldOutLoss).toEqual(want.heldOutLoss);
      expect(r.layers).toEqual(want.layers);
      expect(Object.is(r.layers[1].gradNorm, -0)).toBe(true);
    });
  });
  it('an empty trajectory round-trips', () => {
    expect(decodeTrajectory(viaJson(encodeTrajectory([])))).toEqual([]);
  });
  it.each<[string, () => unknown, string]>([
    ['mixed layer counts', () => encodeTrajectory([record(0), { ...record(1), layers: [] }]), 'trajectory[1].layers: has 0 entries, but record 0 has 2'],
    ['held-out loss missing in one record', () => encodeTrajectory([record(0), record(1, false)]), 'trajectory[1].heldOutLoss: is missing, but record 0 has'],
    ['misnumbered layers', () => encodeTrajectory([{ ...record(0), layers: [{ layer: 1, weightNorm: 1, gradNorm: 1, updateRatio: 1 }, record(0).layers[1]] }]), 'trajectory[0].layers[0].layer: expected layer index 0, got 1'],
  ])('encode rejects %s', (_n, fn, message) => {
    expect(fn).toThrow(message);
  });
  it('decode rejects steps that do not increase and columns of the wrong length', () => {
    const t = viaJson(encodeTrajectory([record(0), record(2), record(1)])) as Record<string, unknown>;
    expect(() => decodeTrajectory(t, 'branches[0].trajectory')).toThrow('branches[0].trajectory.step: steps must increase: entry 2 is 1 after 2');
    const u = viaJson(encodeTrajectory([record(0), record(1)])) as Record<string, unknown>;
    u.count = 3;
    expect(() => decodeTrajectory(u, 'tr')).toThrow('tr.step: holds 2 numbers, expected 3');
  });
});
