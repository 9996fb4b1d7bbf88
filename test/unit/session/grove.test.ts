/** Branches, checkpoints, rewind and replay (invariants; no outside numbers needed). */
import { Grove, Session } from '../../../src/core/session';
import type { Objective } from '../../../src/core/objective';
import type { Experiment } from '../../../src/core/setup';
import { leastSquares } from '../optim/fixtures';
import { networkExperiment } from './network-fixture';

describe('replay', () => {
  it('a 200-step mini-batch Adam run on a network replays bit-identically from spec and seed', () => {
    const g = Grove.create(networkExperiment({ optimizer: 'adam', lr: 0.01, batch: 10 }));
    g.step('main', 200);
    const r = g.replay('main');
    expect(r.match).toBe('bit-identical');
    expect(r.maxRelDiff).toBe(0);
    expect(r.firstDifferingStep).toBeUndefined();
    expect(r.comparedSteps).toContain(200);
    expect(r.comparedSteps.length).toBeGreaterThan(5);
    // the held-out split is reported on every record
    expect(g.trajectory('main')[200].heldOutLoss).toBeGreaterThan(0);
  });

  it('a 200-step mini-batch Adam branch forked from an SGD run replays bit-identically', () => {
    const g = Grove.create(networkExperiment({ optimizer: 'sgd', lr: 0.05, batch: 16 }));
    g.step('main', 20);
    g.branch('main', 10, 'adam', { optimizer: 'adam', lr: 0.01, batch: 10 });
    g.step('adam', 200);
    const r = g.replay('adam');
    expect(r).toMatchObject({ match: 'bit-identical', maxRelDiff: 0 });
    expect(r.comparedSteps[r.comparedSteps.length - 1]).toBe(210);
  });

  it('a branch replays from its parent’s replayed state', () => {
    const g = Grove.create(networkExperiment({ optimizer: 'sgd', lr: 0.05, momentum: 0.9, batch: 16 }));
    g.step('main', 40);
    g.branch('main', 25, 'adam-from-25', { optimizer: 'adam', lr: 0.005 });
    g.step('adam-from-25', 30);
    expect(g.replay('adam-from-25').match).toBe('bit-identical');
    expect(g.replay('adam-from-25', 40).match).toBe('bit-identical');
  });

  it('detects a tiny change (within tolerance) and a large one (differs) at the right step', () => {
    const data = leastSquares(40, 4);
    let built = 0;
    let scale = 0;
    // the first objective is the recorded run; later ones (the replay) perturb every gradient
    // after their 12th call: call 1 is record 0's gradient, so updates 12, 13, … are perturbed
    const perturbed = (eps: number): Objective => {
      let calls = 0;
      return {
        parameterCount: data.parameterCount, blocks: data.blocks, rowCount: data.rowCount,
        value: (w, rows) => data.value(w, rows),
        gradient: (w, out, rows) => {
          const f = data.gradient(w, out, rows);
          if (++calls > 12) out[0] += eps;
          return f;
        },
        hvp: (w, v, out, rows) => data.hvp(w, v, out, rows),
        gnvp: (w, v, out, rows) => data.gnvp(w, v, out, rows)
      };
    };
    const parts = (_e: Experiment) => ({ objective: built++ === 0 ? data : perturbed(scale), initial: new Float64Array(4).fill(0.2) });
    const exp: Experiment = { ...networkExperiment({ optimizer: 'sgd', lr: 0.1 }), setup: { model: { kind: 'rosenbrock', start: [0, 0] }, loss: 'mse', l2: 0 } };
    const g = Grove.create(exp, { parts, checkpointEvery: 5 });
    g.step('main', 30);
    scale = 1e-13;
    const small = g.replay('main');
    expect(small.match).toBe('within-tolerance');
    expect(small.firstDifferingStep).toBe(12);
    expect(small.maxRelDiff).toBeGreaterThan(0);
    // 1e-9 is Grove's configured default replay tolerance (a setting of ours, not a check value).
    expect(small.maxRelDiff).toBeLessThan(1e-9);
    scale = 1e-3;
    const large = g.replay('main', 20);
    expect(large.match).toBe('differs');
    expect(large.firstDifferingStep).toBe(12);
    expect(large.maxRelDiff).toBeGreaterThan(1e-9);
  });
});

describe('checkpoints and rewind', () => {
  it('rewind + re-step gives the same fingerprint as the original run', () => {
    const g = Grove.create(networkExperiment({ optimizer: 'adam', lr: 0.01, batch: 12 }), { checkpointEvery: 7 });
    g.step('main', 50);
    const fp50 = g.session('main').fingerprint();
    const at23 = Session.restore(g.experiment('main'), g.stateAt('main', 23)).fingerprint();
    const s = g.rewind('main', 23);
    expect(s.stepCount).toBe(23);
    expect(s.fingerprint()).toBe(at23);
    // Nothing is dropped by the rewind: the 27 later steps stay until discarded.
    expect(g.trajectory('main').length).toBe(51);
    expect(g.tip('main')).toBe(50);
    g.step('main', 27);
    expect(g.session('main').fingerprint()).toBe(fp50);
    expect(g.trajectory('main').length).toBe(51);
  });

  it('manual checkpoints are kept; automatic ones thin out by doubling the spacing', () => {
    const g = Grove.create(networkExperiment({ optimizer: 'sgd', lr: 0.05 }), { checkpointEvery: 2, maxAutomatic: 4 });
    g.step('main', 3);
    g.checkpoint('main');
    g.step('main', 60);
    const cps = g.checkpoints('main');
    expect(cps[0].step).toBe(0);
    expect(cps.find((c) => c.step === 3)?.manual).toBe(true);
    const auto = cps.filter((c) => !c.manual && c.step !== 0);
    expect(auto.length).toBeLessThanOrEqual(4);
    const spacing = auto[1].step - auto[0].step;
    expect(spacing).toBeGreaterThanOrEqual(16);
    for (const c of auto) expect(c.step % spacing).toBe(0);
    for (const c of cps) expect(c.fingerprint).toBe(Session.restore(g.experiment('main'), c.state).fingerprint());
  });

  it('refuses out-of-range steps with exact messages', () => {
    const g = Grove.create(networkExperiment({ optimizer: 'sgd', lr: 0.05 }));
    g.step('main', 5);
    expect(() => g.rewind('main', 6)).toThrow("step must be an integer in [0, 5] for branch 'main', got 6");
    expect(() => g.rewind('nope', 1)).toThrow("no branch named 'nope' (branches: main)");
    g.branch('main', 3, 'b', { lr: 0.01 });
    expect(() => g.rewind('b', 2)).toThrow("step must be an integer in [3, 3] for branch 'b', got 2 (the branch starts at step 3; use its parent 'main' for earlier steps)");
    expect(() => g.branch('main', 1, 'b', {})).toThrow("a branch named 'b' already exists");
  });
});

describe('branches', () => {
  it('branch states never leak: stepping, rewinding and mutating copies leave other branches untouched', () => {
    const g = Grove.create(networkExperiment({ optimizer: 'adam', lr: 0.01, batch: 8 }));
    g.step('main', 20);
    const mainFp = g.session('main').fingerprint();
    const mainParams = Float64Array.from(g.session('main').parameters);
    g.branch('main', 10, 'lower-lr', { lr: 0.001 });
    g.branch('main', 10, 'same', {});
    g.step('lower-lr', 30);
    g.rewind('lower-lr', 15);
    const cps = g.checkpoints('main');
    cps[0].state.params.fill(0);
    g.trajectory('main')[3].layers[0].weightNorm = -1;
    expect(g.session('main').fingerprint()).toBe(mainFp);
    expect(Array.from(g.session('main').parameters)).toEqual(Array.from(mainParams));
    expect(g.trajectory('main')[3].layers[0].weightNorm).toBeGreaterThan(0);
    expect(g.checkpoints('main')[0].state.params.some((x) => x !== 0)).toBe(true);
    // an unchanged recipe continues exactly like the parent
    g.step('same', 10);
    expect(g.session('same').fingerprint()).toBe(mainFp);
    expect(g.trajectory('same').length).toBe(21);
  });

  it('same optimizer kind keeps the moments and t; a new kind starts fresh', () => {
    const g = Grove.create(networkExperiment({ optimizer: 'adam', lr: 0.01 }));
    g.step('main', 6);
    const parent = g.session('main').optimizerState();
    g.branch('main', 6, 'amsgrad', { amsgrad: true });
    const kept = g.session('amsgrad').optimizerState();
    expect(kept.t).toBe(6);
    expect(Array.from(kept.buffers.m)).toEqual(Array.from(parent.buffers.m));
    expect(Array.from(kept.buffers.vMax)).toEqual(new Array(parent.buffers.m.length).fill(0));
    g.branch('main', 6, 'to-sgd', { optimizer: 'sgd', momentum: 0.9 });
    const fresh = g.session('to-sgd').optimizerState();
    expect(fresh.kind).toBe('sgd');
    expect(fresh.t).toBe(0);
    expect(fresh.buffers.velocity.every((x) => x === 0)).toBe(true);
    expect(Array.from(g.session('to-sgd').parameters)).toEqual(Array.from(g.session('main').parameters));
    expect(g.origin('to-sgd')).toEqual({ parent: 'main', step: 6, patch: { optimizer: 'sgd', momentum: 0.9 }, restart: false });
  });

  it('switching batch size mid-epoch and back to full batch works and replays', () => {
    const g = Grove.create(networkExperiment({ optimizer: 'sgd', lr: 0.05, batch: 10 }));
    g.step('main', 3);
    g.branch('main', 3, 'b7', { batch: 7 });
    g.step('b7', 25);
    g.branch('b7', 20, 'full', { batch: 'full', optimizer: 'lbfgs', lr: 1 });
    g.step('full', 5);
    expect(g.session('full').state().order).toBeNull();
    expect(g.replay('full').match).toBe('bit-identical');
    expect(g.replay('b7').match).toBe('bit-identical');
  });
});

describe('snapshot and restore', () => {
  it('a restored grove continues every branch bit for bit and still replays', () => {
    const g = Grove.create(networkExperiment({ optimizer: 'adam', lr: 0.01, batch: 16 }), { checkpointEvery: 5 });
    g.step('main', 12);
    g.branch('main', 8, 'sgd', { optimizer: 'sgd', lr: 0.05, momentum: 0.9 });
    g.step('sgd', 6);
    const snap = JSON.parse(JSON.stringify(g.snapshot(), (_k, v: unknown) => (v instanceof Float64Array || v instanceof Int32Array ? { t: v.constructor.name, a: Array.from(v) } : v)), (_k, v: { t?: string; a?: number[] }) =>
      v && typeof v === 'object' && v.t !== undefined && v.a !== undefined ? (v.t === 'Int32Array' ? Int32Array.from(v.a) : Float64Array.from(v.a)) : v
    );
    const h = Grove.restore(snap, { checkpointEvery: 5 });
    expect(h.names()).toEqual(['main', 'sgd']);
    g.step('main', 4);
    h.step('main', 4);
    g.step('sgd', 3);
    h.step('sgd', 3);
    expect(h.session('main').fingerprint()).toBe(g.session('main').fingerprint());
    expect(h.session('sgd').fingerprint()).toBe(g.session('sgd').fingerprint());
    expect(h.replay('sgd').match).toBe('bit-identical');
    expect(h.trajectory('sgd').length).toBe(18);
  });

  it('refuses a snapshot whose parent comes later', () => {
    const g = Grove.create(networkExperiment({ optimizer: 'sgd', lr: 0.05 }));
    g.branch('main', 0, 'b', {});
    const snap = g.snapshot();
    snap.branches.reverse();
    expect(() => Grove.restore(snap)).toThrow("branch 'b' names parent 'main', which does not come before it in the snapshot");
  });
});

describe('branches that change the setup or the seed', () => {
  it('start afresh at step 0 from their own init and replay bit-identically', () => {
    const base = networkExperiment({ optimizer: 'sgd', lr: 0.05 });
    const g = Grove.create(base);
    g.step('main', 5);
    const he: Experiment = { ...base, setup: { ...base.setup, model: { ...(base.setup.model as Extract<Experiment['setup']['model'], { kind: 'network' }>), init: 'he-normal' } } };
    g.fork('main', 0, 'he', he, { 'model.init': 'he-normal' });
    expect(g.origin('he')).toEqual({ parent: 'main', step: 0, patch: { 'model.init': 'he-normal' }, restart: true });
    // a different init scheme gives different starting weights than the parent's step 0
    expect(g.trajectory('he')[0].loss).not.toBe(g.trajectory('main')[0].loss);
    expect(g.trajectory('he')).toHaveLength(1);
    g.step('he', 12);
    expect(g.replay('he').match).toBe('bit-identical');
    // the same experiment from scratch reaches the same state
    const alone = Grove.create(he);
    alone.step('main', 12);
    expect(alone.session('main').fingerprint()).toBe(g.session('he').fingerprint());
  });

  it('refuse to fork after step 0', () => {
    const base = networkExperiment();
    const g = Grove.create(base);
    g.step('main', 3);
    expect(() => g.fork('main', 2, 'seed9', { ...base, seed: 9 }, { seed: 9 })).toThrow(/changes the seed, so it must start at step 0, not step 2/);
  });

  it('keep carrying the state when only the recipe changes', () => {
    const base = networkExperiment();
    const g = Grove.create(base);
    g.step('main', 4);
    g.fork('main', 2, 'faster', { ...base, recipe: { ...base.recipe, lr: 0.2 } }, { lr: 0.2 });
    expect(g.origin('faster')?.restart).toBe(false);
    expect(g.trajectory('faster').map((r) => r.step)).toEqual([0, 1, 2]);
  });
});
