/**
 * What long runs and a responsive caller need from a grove: a bounded trajectory, rewind and
 * replay in slices with stop, runs continued over several calls, and resuming from saved
 * checkpoints. Invariants only: every expectation compares the grove with itself or with an
 * unbounded / unsliced run of the same experiment, so no outside reference is needed.
 */
import { boundTrajectory, Grove, sameRecord, Session } from '../../../src/core/session';
import type { StepRecord } from '../../../src/core/state';
import { networkExperiment } from './network-fixture';

const sgd = () => networkExperiment({ optimizer: 'sgd', lr: 0.05, momentum: 0.9, batch: 16 });

describe('bounded trajectory', () => {
  it('keeps record 0, the newest records and the checkpoint steps, and stays under the bound', () => {
    const g = Grove.create(sgd(), { checkpointEvery: 7, maxRecords: 50, recentRecords: 10 });
    const full = Grove.create(sgd(), { checkpointEvery: 7 });
    g.step('main', 600);
    full.step('main', 600);
    const t = g.trajectory('main');
    expect(t.length).toBeLessThanOrEqual(50);
    expect(t[0].step).toBe(0);
    expect(t.slice(-10).map((r) => r.step)).toEqual([591, 592, 593, 594, 595, 596, 597, 598, 599, 600]);
    for (let i = 1; i < t.length; i++) expect(t[i].step).toBeGreaterThan(t[i - 1].step);
    const steps = new Set(t.map((r) => r.step));
    for (const c of g.checkpoints('main')) expect(steps.has(c.step)).toBe(true);
    // thinning drops records, never changes them
    const reference = full.trajectory('main');
    for (const r of t) expect(sameRecord(r, reference[r.step])).toBe(true);
    expect(g.replay('main').match).toBe('bit-identical');
  });

  it('a rewind to a step whose record was thinned re-steps into it and restores that record', () => {
    const g = Grove.create(sgd(), { checkpointEvery: 8, maxRecords: 40, recentRecords: 8 });
    const full = Grove.create(sgd(), { checkpointEvery: 8 });
    g.step('main', 400);
    full.step('main', 400);
    const kept = new Set(g.trajectory('main').map((r) => r.step));
    const target = [...Array(390).keys()].reverse().find((s) => s > 0 && !kept.has(s)) as number;
    expect(target).toBeGreaterThan(0);
    g.rewind('main', target);
    const t = g.trajectory('main');
    // Nothing after the target is dropped; the re-stepped record is put back in its place.
    expect(t[t.length - 1].step).toBe(400);
    const back = t.find((r) => r.step === target);
    expect(back).toBeDefined();
    expect(sameRecord(back as StepRecord, full.trajectory('main')[target])).toBe(true);
    expect(g.session('main').fingerprint()).toBe(Session.restore(full.experiment('main'), full.stateAt('main', target)).fingerprint());
  });

  it('boundTrajectory thins to about (max + recent) / 2 and nests: thinning again keeps a subset', () => {
    const recs = (n: number): StepRecord[] => Array.from({ length: n }, (_, i) => ({ step: i, loss: i, batchLoss: i, gradNorm: 1, updateNorm: 1, lr: 1, evaluations: 1, layers: [], ms: 0 }));
    const a = recs(1001);
    expect(boundTrajectory(a, { maxRecords: 100, recentRecords: 20 }, new Set([333]))).toBe(true);
    expect(a.length).toBeLessThanOrEqual(60);
    expect(a[0].step).toBe(0);
    expect(a[a.length - 1].step).toBe(1000);
    expect(a.some((r) => r.step === 333)).toBe(true);
    const before = new Set(a.map((r) => r.step));
    for (let s = 1001; s < 1100; s++) a.push(recs(s + 1)[s]);
    boundTrajectory(a, { maxRecords: 100, recentRecords: 20 }, new Set());
    for (const r of a) if (r.step <= 1000 - 20) expect(before.has(r.step)).toBe(true);
    expect(boundTrajectory(recs(10), { maxRecords: 100, recentRecords: 20 }, new Set())).toBe(false);
  });
});

describe('sliced rewind and replay', () => {
  it('a rewind task stopped midway leaves the branch unchanged; run on, it equals the synchronous rewind', () => {
    const g = Grove.create(sgd(), { checkpointEvery: 50 });
    g.step('main', 120);
    const fp = g.session('main').fingerprint();
    const task = g.rewindTask('main', 99);
    expect(task.total).toBe(49);
    let calls = 0;
    const progress: number[] = [];
    expect(task.run({ shouldStop: () => ++calls > 3, onProgress: (done) => progress.push(done) })).toBe(false);
    expect(progress).toEqual([1, 2, 3, 4]);
    expect(task.done).toBe(4);
    expect(() => task.result()).toThrow('the task is not finished (4 of 49 updates done)');
    expect(g.session('main').stepCount).toBe(120);
    expect(g.session('main').fingerprint()).toBe(fp);
    // one update per call from here: the 45 remaining updates take 45 calls
    let slices = 0;
    do slices++;
    while (!task.run({ shouldStop: () => true }));
    expect(slices).toBe(45);
    const other = Grove.create(sgd(), { checkpointEvery: 50 });
    other.step('main', 120);
    other.rewind('main', 99);
    expect(task.result().fingerprint()).toBe(other.session('main').fingerprint());
    expect(g.session('main').stepCount).toBe(99);
    // The rewind keeps the later steps (until discarded).
    expect(g.trajectory('main')).toHaveLength(121);
    expect(g.tip('main')).toBe(120);
    expect(g.checkpointSteps('main')).toEqual([0, 50, 100]);
  });

  it('a rewind task refuses to commit when the branch moved meanwhile', () => {
    const g = Grove.create(sgd(), { checkpointEvery: 10 });
    g.step('main', 30);
    const task = g.rewindTask('main', 25);
    task.run({ shouldStop: () => true });
    g.step('main', 1);
    expect(() => task.run()).toThrow("branch 'main' changed while the rewind to step 25 ran; nothing was rewound");
    expect(g.session('main').stepCount).toBe(31);
  });

  it('a replay run one update per slice gives the same report as the whole replay, for a forked branch too', () => {
    const g = Grove.create(sgd(), { checkpointEvery: 6 });
    g.step('main', 30);
    g.branch('main', 17, 'adam', { optimizer: 'adam', lr: 0.01 });
    g.step('adam', 20);
    const task = g.replayTask('adam');
    // the ancestors up to the fork, then the branch itself
    expect(task.total).toBe(17 + 20);
    let slices = 1;
    while (!task.run({ shouldStop: () => true })) slices++;
    expect(slices).toBe(37);
    const whole = g.replay('adam');
    expect(task.result()).toEqual(whole);
    expect(whole.match).toBe('bit-identical');
    expect(whole.recordedFingerprint).toBe(g.session('adam').fingerprint());
    expect(whole.replayedFingerprint).toBe(whole.recordedFingerprint);
  });

  it('a replay flags a recorded step record that differs in one field', () => {
    const g = Grove.create(sgd(), { checkpointEvery: 5 });
    g.step('main', 12);
    const snap = g.snapshot();
    snap.branches[0].trajectory[4] = { ...snap.branches[0].trajectory[4], updateNorm: snap.branches[0].trajectory[4].updateNorm * (1 + 1e-15) + 1e-300 };
    const r = Grove.restore(snap, { checkpointEvery: 5 }).replay('main');
    expect(r).toMatchObject({ match: 'within-tolerance', firstDifferingStep: 4, maxRelDiff: 0 });
  });
});

describe('runs over several calls', () => {
  it('runUntil with a carry continues the same run: same stop step and state as one call', () => {
    const cond = { kind: 'steps', count: 37 } as const;
    const one = Grove.create(sgd());
    const whole = one.runUntil('main', cond, 100);
    expect(whole).toMatchObject({ reason: 'condition' });
    const g = Grove.create(sgd());
    const carry = { startLoss: NaN, done: 0 };
    let reason = 'stopped';
    while (reason === 'stopped') {
      let n = 0;
      const res = g.runUntil('main', cond, 100 - carry.done, { shouldStop: () => n++ >= 5 }, carry);
      carry.done += res.records.length;
      reason = res.reason;
    }
    expect(reason).toBe('condition');
    expect(g.session('main').stepCount).toBe(37);
    expect(g.session('main').fingerprint()).toBe(one.session('main').fingerprint());
    expect(g.checkpointSteps('main')).toEqual(one.checkpointSteps('main'));
  });

  it('checkpoints taken during runUntil hold the state of their own step', () => {
    const g = Grove.create(sgd(), { checkpointEvery: 4 });
    g.runUntil('main', { kind: 'loss-below', value: -1 }, 13);
    const stepped = Grove.create(sgd(), { checkpointEvery: 4 });
    stepped.step('main', 13);
    const cps = g.checkpoints('main');
    expect(cps.map((c) => c.step)).toEqual([0, 4, 8, 12]);
    const expected = stepped.checkpoints('main');
    cps.forEach((c, i) => {
      expect(c.state.step).toBe(c.step);
      expect(c.fingerprint).toBe(expected[i].fingerprint);
      expect(c.fingerprint).toBe(Session.restore(g.experiment('main'), c.state).fingerprint());
    });
  });

  it('checkpointEvery 0 keeps only the first checkpoint and manual ones', () => {
    const g = Grove.create(sgd(), { checkpointEvery: 0 });
    g.step('main', 20);
    g.checkpoint('main');
    g.step('main', 20);
    expect(g.checkpointSteps('main')).toEqual([0, 20]);
    expect(g.rewind('main', 31).stepCount).toBe(31);
  });
});

describe('resume from saved data', () => {
  it('continues bit for bit from a head state, a thinned trajectory and a few checkpoints, and still replays', () => {
    const a = Grove.create(sgd(), { checkpointEvery: 5 });
    a.step('main', 40);
    const cps = a.checkpoints('main').filter((c) => c.step === 0 || c.step === 15 || c.step === 35);
    const trajectory = a.trajectory('main').filter((r) => r.step % 3 === 0 || r.step === 40);
    const b = Grove.resume(a.experiment('main'), { state: a.session('main').state(), trajectory, checkpoints: [cps[2], cps[0], cps[1], cps[1]] }, { checkpointEvery: 5 });
    expect(b.checkpointSteps('main')).toEqual([0, 15, 35, 40]);
    expect(b.replay('main').match).toBe('bit-identical');
    b.rewind('main', 22);
    a.rewind('main', 22);
    expect(b.session('main').fingerprint()).toBe(a.session('main').fingerprint());
    b.step('main', 9);
    a.step('main', 9);
    expect(b.session('main').fingerprint()).toBe(a.session('main').fingerprint());
  });

  it('refuses data whose trajectory does not end at the head or whose checkpoint lies after it', () => {
    const a = Grove.create(sgd(), { checkpointEvery: 5 });
    a.step('main', 10);
    const state = a.stateAt('main', 7);
    expect(() => Grove.resume(a.experiment('main'), { state, trajectory: a.trajectory('main'), checkpoints: [] })).toThrow('saved trajectory ends at step 10 but the saved state is at step 7');
    const head = a.session('main').state();
    expect(() => Grove.resume(a.experiment('main'), { state, trajectory: a.trajectory('main').slice(0, 8), checkpoints: a.checkpoints('main') })).toThrow('a saved checkpoint is at step 10, after the saved state (step 7)');
    // with no checkpoint at all, the head serves as one
    expect(Grove.resume(a.experiment('main'), { state: head, trajectory: a.trajectory('main'), checkpoints: [] }).checkpointSteps('main')).toEqual([10]);
  });
});
