/**
 * buildLedger end to end: a real session is stepped, saved, read back and continued, and
 * its fingerprint matches an uninterrupted run bit for bit. Failed builds throw before
 * returning anything.
 */
import { Session } from '../../../src/core/session';
import { parseSpec } from '../../../src/experiment';
import type { Experiment } from '../../../src/core/setup';
import type { SessionState, StepRecord } from '../../../src/core/state';
import { buildLedger, decodeBranch, decodeBranches, decodeFindings, decodeTrajectory, ledgerSize, LedgerError, serializeLedger, validateLedger } from '../../../src/ledger';
import { bits, input, P, payloadNaN, state } from './fixtures';

const SPEC = `seed: 11
model:
  inputs: 2
  layers: [{ units: 4, activation: tanh }, { units: 1 }]
data:
  x: [[0.1, 0.9], [0.4, -0.2], [-0.7, 0.3], [0.8, 0.8], [-0.5, -0.6], [0.2, 0.0]]
  y: [0.3, -0.1, 0.5, 0.9, -0.4, 0.05]
recipe: { optimizer: adam, lr: 0.05, batch: 4 }
`;

function experiment(): Experiment {
  const r = parseSpec(SPEC);
  if (!r.ok) throw new Error(r.errors.map((e) => e.message).join('\n'));
  return r.experiment;
}

describe('buildLedger with a real session', () => {
  const exp = experiment();
  const session = Session.create(exp);
  const records: StepRecord[] = [session.initialRecord()];
  const checkpoints: SessionState[] = [session.state()];
  for (let k = 0; k < 40; k++) {
    records.push(...session.step());
    checkpoints.push(session.state());
  }
  const head = session.state();
  const ledger = buildLedger({
    engine: 'stepwell test', spec: SPEC, seed: exp.seed, parameterCount: head.params.length,
    branches: [{ name: 'main', trajectory: records, checkpoints, head, pinned: [13] }],
    activeBranch: 'main', savedAt: '2026-01-01T00:00:00.000Z', limits: { maxCheckpoints: 6, maxRecords: 16 },
  });

  it('validates after a trip through JSON text', () => {
    const r = validateLedger(JSON.parse(serializeLedger(ledger)));
    expect(r.ok ? [] : r.errors).toEqual([]);
  });

  it('thins checkpoints and caps records as asked, keeping first, head and pins', () => {
    const b = ledger.branches[0];
    const steps = [...b.checkpoints.map((c) => c.step), b.head.step];
    expect(steps.length).toBe(6);
    expect(steps[0]).toBe(0);
    expect(steps).toContain(13);
    expect(b.head.step).toBe(40);
    expect(b.trajectory.count).toBeLessThanOrEqual(16);
    expect(ledgerSize(ledger)).toEqual({ bytes: Buffer.byteLength(serializeLedger(ledger), 'utf8'), checkpoints: 6, records: b.trajectory.count });
  });

  it('a restored checkpoint continues bit for bit like the uninterrupted run', () => {
    const decoded = decodeBranch(JSON.parse(serializeLedger(ledger)), 'main');
    const pin = decoded.checkpoints.find((c) => c.step === 13)!;
    const resumed = Session.restore(exp, pin.state);
    expect(resumed.fingerprint()).toBe(pin.fingerprint);
    resumed.step(40 - 13);
    expect(resumed.fingerprint()).toBe(session.fingerprint());
    expect(decoded.head.fingerprint).toBe(session.fingerprint());
  });

  it('stored records equal the session records bit for bit', () => {
    const decoded = decodeBranch(ledger, 'main');
    for (const r of decoded.trajectory) {
      const original = records[r.step];
      expect(Object.is(r.batchLoss, original.batchLoss) && r.loss === original.loss && r.ms === original.ms).toBe(true);
      expect(r.layers).toEqual(original.layers);
    }
  });
});

describe('buildLedger: structure and atomicity', () => {
  it('pins the fork point of a child branch in its parent', () => {
    const l = buildLedger({ ...input(), limits: { maxCheckpoints: 3 } });
    expect(l.branches[0].checkpoints.map((c) => c.step)).toContain(4);
    expect(l.branches[1].parent).toEqual({ branch: 'main', step: 4 });
    expect(l.branches[1].patch).toEqual({ lr: 0.01 });
  });

  it('stores a forked branch’s own records only, and decodes it with its parent’s records before the fork', () => {
    const l = buildLedger(input());
    expect(decodeTrajectory(l.branches[1].trajectory).map((r) => r.step)).toEqual([4, 5, 6, 7]);
    const [main, fork] = decodeBranches(JSON.parse(serializeLedger(l)));
    expect(fork.trajectory.map((r) => r.step)).toEqual([0, 1, 2, 3, 4, 5, 6, 7]);
    expect(fork.trajectory.slice(0, 4)).toEqual(main.trajectory.slice(0, 4));
    expect([fork.patch, fork.restart, fork.cursor]).toEqual([{ lr: 0.01 }, false, 7]);
  });

  it('keeps every branch\'s findings at the top level with non-finite numbers exact, and the diagnosis readouts per branch', () => {
    const json = JSON.parse(serializeLedger(buildLedger(input())));
    const checked = validateLedger(json);
    if (!checked.ok) throw new Error(checked.errors.join('; '));
    const f = decodeFindings(checked.ledger.findings);
    expect(f.map((x) => [x.branch, x.step, x.statement])).toEqual([['main', 5, 'f64:looks like a scalar'], ['lower-lr', 6, '~tilde']]);
    expect(f[0].measured).toBe(Infinity);
    expect(bits(Float64Array.of(f[1].value as number))).toEqual(bits(Float64Array.of(payloadNaN())));
    const [main] = decodeBranches(checked.ledger);
    expect(main.readouts.noise).toEqual({ step: 10, noiseScale: null, traceCovariance: Infinity });
    expect(Number.isNaN((main.readouts.activations as { now: { layers: { preSpread: number }[] } }).now.layers[0].preSpread)).toBe(true);
    expect(main.readouts.init).toEqual({ rows: 3, chosen: { scheme: 'lecun-normal', gain: 0.05 } });
  });

  it('is deterministic for the same input', () => {
    expect(serializeLedger(buildLedger(input()))).toBe(serializeLedger(buildLedger(input())));
  });

  it('drops a checkpoint that duplicates the head', () => {
    const i = input();
    const l = buildLedger({ ...i, branches: [{ ...i.branches[0], checkpoints: [state(0), state(10)] }], findings: [] });
    expect(l.branches[0].checkpoints.map((c) => c.step)).toEqual([0]);
  });

  it.each<[string, () => unknown, string]>([
    ['a wrong parameter count', () => buildLedger({ ...input(), parameterCount: P + 1 }), 'branches[0].checkpoints[0].state.params: holds 5 numbers, expected 6'],
    ['a finding without its branch', () => buildLedger({ ...input(), findings: [{ rule: 'r', value: NaN }] }), "findings[0].branch: must name the finding's branch, got nothing"],
    ['a finding of an unknown branch', () => buildLedger({ ...input(), findings: [{ rule: 'r', branch: 'gone' }] }), "findings[0].branch: 'gone' is not the name of a branch"],
    ['a typed array inside a finding', () => buildLedger({ ...input(), findings: [{ rule: 'r', branch: 'main', w: new Float64Array(2) }] }), 'findings[0].w: is a class instance or typed array, which is not plain JSON'],
    ['a typed array inside a patch', () => {
      const i = input();
      return buildLedger({ ...i, branches: [i.branches[0], { ...i.branches[1], patch: { w: new Float64Array(2) } }] });
    }, 'branches[1].patch.w: is a class instance or typed array, which is not plain JSON'],
    ['a checkpoint after the head', () => {
      const i = input();
      return buildLedger({ ...i, branches: [{ ...i.branches[0], checkpoints: [state(0), state(12)] }, i.branches[1]] });
    }, 'branches[0].checkpoints[1]: is at step 12, after the head (step 10)'],
    ['two checkpoints at one step', () => {
      const i = input();
      return buildLedger({ ...i, branches: [{ ...i.branches[0], checkpoints: [state(2), state(2)] }, i.branches[1]] });
    }, 'branches[0].checkpoints[1]: is a second checkpoint at step 2'],
    ['uneven trajectory records', () => {
      const i = input();
      const t = [...i.branches[0].trajectory];
      t[3] = { ...t[3], layers: [] };
      return buildLedger({ ...i, branches: [{ ...i.branches[0], trajectory: t }, i.branches[1]] });
    }, 'branches[0].trajectory.trajectory[3].layers: has 0 entries, but record 0 has 2'],
    ['an unknown active branch', () => buildLedger({ ...input(), activeBranch: 'x' }), "activeBranch: no branch is named 'x'"],
  ])('throws a LedgerError for %s, returning nothing', (_n, fn, message) => {
    let result: unknown;
    let error: unknown;
    try {
      result = fn();
    } catch (e) {
      error = e;
    }
    expect(result).toBeUndefined();
    expect(error).toBeInstanceOf(LedgerError);
    expect((error as Error).message).toContain(message);
  });
});
