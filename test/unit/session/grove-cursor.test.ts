/**
 * Branch bookkeeping of the grove: rewinding without losing steps (cursor and tip), discarding
 * kept steps explicitly, forking from checkpoints and kept steps, deleting and renaming
 * branches, thinning per branch, and snapshots with steps kept ahead of the cursor.
 * Invariants of our own engine (bit-identical replays), so no outside numbers are needed.
 */
import { Grove, sameRecord, Session } from '../../../src/core/session';
import type { GroveSnapshot } from '../../../src/core/session';
import { networkExperiment } from './network-fixture';

const sgd = () => networkExperiment({ optimizer: 'sgd', lr: 0.05, momentum: 0.9, batch: 16 });

describe('rewind keeps the later steps', () => {
  it('stepping on with the same recipe re-steps through the kept steps to the same tip, recording nothing twice', () => {
    const g = Grove.create(sgd(), { checkpointEvery: 10 });
    g.step('main', 60);
    const tipPrint = g.session('main').fingerprint();
    const before = g.trajectory('main');
    const checkpoints = g.checkpointSteps('main');
    g.rewind('main', 25);
    expect(g.session('main').stepCount).toBe(25);
    expect(g.tip('main')).toBe(60);
    expect(g.trajectory('main')).toHaveLength(61);
    expect(g.checkpointSteps('main')).toEqual(checkpoints);
    expect(g.tipState('main').step).toBe(60);
    const re = g.step('main', 20);
    expect(re).toHaveLength(20);
    for (const r of re) expect(sameRecord(r, before[r.step])).toBe(true);
    expect(g.tip('main')).toBe(60);
    g.step('main', 15);
    expect(g.session('main').fingerprint()).toBe(tipPrint);
    // Past the tip the branch grows as usual.
    g.step('main', 5);
    expect(g.tip('main')).toBe(65);
    const t = g.trajectory('main');
    expect(t).toHaveLength(66);
    expect(t.map((r) => r.step)).toEqual([...Array(66).keys()]);
    expect(g.replay('main').match).toBe('bit-identical');
  });

  it('moves forward to a kept step from the nearest saved state, not from step 0', () => {
    const g = Grove.create(sgd(), { checkpointEvery: 10 });
    g.step('main', 60);
    const at47 = g.stateAt('main', 47);
    g.rewind('main', 5);
    const task = g.rewindTask('main', 47);
    expect(task.total).toBe(7); // from the checkpoint at step 40
    task.run();
    expect(g.session('main').fingerprint()).toBe(Session.restore(g.experiment('main'), at47).fingerprint());
    // To the tip itself: from the kept tip state, no update at all.
    expect(g.rewindTask('main', 60).total).toBe(0);
    g.rewind('main', 60);
    expect(g.tip('main')).toBe(60);
    expect(() => g.rewind('main', 61)).toThrow("step must be an integer in [0, 60] for branch 'main', got 61");
  });

  it('discard drops the kept steps only when asked, and refuses while a branch forks from them', () => {
    const g = Grove.create(sgd(), { checkpointEvery: 10 });
    g.step('main', 40);
    g.rewind('main', 12);
    g.branch('main', 30, 'later', { lr: 0.01 });
    expect(() => g.discard('main')).toThrow("branch 'later' (from step 30) forks from the steps after step 12 of 'main': delete it first");
    expect(g.remove('later')).toEqual(['later']);
    expect(g.discard('main')).toBe(28);
    expect(g.tip('main')).toBe(12);
    expect(g.trajectory('main')).toHaveLength(13);
    expect(g.checkpointSteps('main')).toEqual([0, 10]);
    expect(g.discard('main')).toBe(0);
    g.step('main', 3);
    expect(g.replay('main').match).toBe('bit-identical');
  });

  it('a kept record that the re-step does not reproduce is replaced, and the kept steps after it dropped', () => {
    const g = Grove.create(sgd(), { checkpointEvery: 10 });
    g.step('main', 30);
    g.rewind('main', 10);
    const snap: GroveSnapshot = g.snapshot();
    const branch = snap.branches[0];
    expect(branch.tip?.step).toBe(30);
    branch.trajectory[15] = { ...branch.trajectory[15], loss: branch.trajectory[15].loss * 2 };
    const h = Grove.restore(snap, { checkpointEvery: 10 });
    h.step('main', 10);
    expect(h.tip('main')).toBe(20);
    expect(h.trajectory('main')).toHaveLength(21);
    expect(sameRecord(h.trajectory('main')[15], g.trajectory('main')[15])).toBe(true);
    expect(h.replay('main').match).toBe('bit-identical');
  });
});

describe('forks, deletes and renames', () => {
  it('forks from a checkpoint and from a kept step ahead of the cursor; every branch replays', () => {
    const g = Grove.create(sgd(), { checkpointEvery: 10 });
    g.step('main', 50);
    g.rewind('main', 5);
    g.branch('main', 40, 'from-40', { lr: 0.02 });
    g.branch('main', 20, 'from-20', { optimizer: 'adam', lr: 0.005 });
    expect(g.session('from-40').stepCount).toBe(40);
    expect(g.checkpointSteps('from-40')).toEqual([40]);
    expect(g.session('main').stepCount).toBe(5); // the parent's cursor did not move
    g.step('from-40', 15);
    g.step('from-20', 15);
    for (const n of g.names()) expect([n, g.replay(n).match]).toEqual([n, 'bit-identical']);
    expect(g.origin('from-40')).toEqual({ parent: 'main', step: 40, patch: { lr: 0.02 }, restart: false });
  });

  it('deletes a branch with its descendants, never the root', () => {
    const g = Grove.create(sgd());
    g.step('main', 20);
    g.branch('main', 10, 'a', { lr: 0.02 });
    g.step('a', 5);
    g.branch('a', 12, 'a1', { lr: 0.01 });
    g.branch('main', 15, 'b', { lr: 0.03 });
    g.branch('a1', 12, 'a1x', { lr: 0.005 });
    expect(() => g.remove('main')).toThrow("'main' is the root branch (the spec's own recipe): it cannot be deleted");
    expect(g.remove('a')).toEqual(['a', 'a1', 'a1x']);
    expect(g.names()).toEqual(['main', 'b']);
    expect(g.children('main')).toEqual(['b']);
  });

  it('renames a branch: children follow, order is kept, bad names are refused with the rule', () => {
    const g = Grove.create(sgd());
    g.step('main', 10);
    g.branch('main', 5, 'a', { lr: 0.02 });
    g.step('a', 4);
    g.branch('a', 7, 'a1', { lr: 0.01 });
    g.rename('main', 'baseline');
    expect(g.names()).toEqual(['baseline', 'a', 'a1']);
    expect(g.origin('a')?.parent).toBe('baseline');
    expect(g.root()).toBe('baseline');
    expect(() => g.rename('a', 'a1')).toThrow("a branch named 'a1' already exists");
    expect(() => g.rename('a', ' padded')).toThrow('a branch name must not start or end with a space, got " padded"');
    expect(() => g.rename('a', 'x'.repeat(41))).toThrow('a branch name has at most 40 characters, got 41');
    expect(() => g.rename('a', 'tab\there')).toThrow('a branch name must not contain control characters');
    expect(g.replay('a1').match).toBe('bit-identical');
  });
});

describe('per-branch bounds', () => {
  it('thins each branch’s checkpoints on its own spacing', () => {
    const g = Grove.create(sgd(), { checkpointEvery: 2, maxAutomatic: 5 });
    g.step('main', 200);
    g.branch('main', 30, 'short', { lr: 0.02 });
    g.step('short', 12);
    const auto = (n: string) => g.checkpoints(n).filter((c, i) => i > 0 && !c.manual);
    expect(auto('main').length).toBeLessThanOrEqual(5);
    // 32, 34, …, 42 are six: the short branch doubles its own spacing to 4 and keeps 32, 36, 40.
    expect(auto('short').map((c) => c.step)).toEqual([32, 36, 40]);
    expect(g.checkpointSteps('short')[0]).toBe(30);
    const spacing = auto('main')[1].step - auto('main')[0].step;
    expect(spacing).toBeGreaterThanOrEqual(64);
  });
});

describe('snapshots with kept steps', () => {
  it('restore keeps cursor, tip and kept steps; every branch continues and replays bit for bit', () => {
    const g = Grove.create(sgd(), { checkpointEvery: 10 });
    g.step('main', 40);
    g.branch('main', 20, 'slow', { lr: 0.01 });
    g.step('slow', 30);
    g.rewind('slow', 33);
    const snap = JSON.parse(JSON.stringify(g.snapshot(), (_k, v) => (ArrayBuffer.isView(v) ? { typed: v.constructor.name, values: Array.from(v as Float64Array) } : v)), (_k, v) =>
      v && typeof v === 'object' && 'typed' in v ? (v.typed === 'Int32Array' ? Int32Array.from(v.values) : Float64Array.from(v.values)) : v
    );
    // the setup arrays went through JSON too: put the original experiments back
    for (const b of snap.branches) b.experiment = g.experiment(b.name);
    const h = Grove.restore(snap, { checkpointEvery: 10 });
    expect(h.session('slow').stepCount).toBe(33);
    expect(h.tip('slow')).toBe(50);
    for (const n of ['main', 'slow']) expect(h.replay(n).match).toBe('bit-identical');
    expect(h.replay('slow', 33).match).toBe('bit-identical');
    h.step('slow', 17);
    expect(h.session('slow').fingerprint()).toBe(g.tipState('slow') && Session.restore(g.experiment('slow'), g.tipState('slow')).fingerprint());
  });
});
