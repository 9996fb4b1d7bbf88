/** Session invariants: determinism, restore, deep copies, mini-batch epochs, records. */
import { Session } from '../../../src/core/session';
import type { Recipe } from '../../../src/core/setup';
import { experiment, leastSquares } from '../optim/fixtures';

const data = leastSquares(50, 6); // scenario of our own: 50 rows, 6 features
function make(patch: Partial<Recipe>, seed = 3): Session {
  return Session.create(experiment(patch, seed), { objective: data, initial: new Float64Array(6).fill(0.1) });
}

describe('Session determinism', () => {
  it.each<[string, Partial<Recipe>]>([
    ['sgd full batch', { optimizer: 'sgd', lr: 0.1 }],
    ['sgd momentum, batch 8', { optimizer: 'sgd', lr: 0.05, momentum: 0.9, batch: 8 }],
    ['adam, batch 7', { optimizer: 'adam', lr: 0.01, batch: 7 }]
  ])('%s: same seed gives the same fingerprint; restore(state()) continues bit for bit', (_name, patch) => {
    const a = make(patch);
    const b = make(patch);
    a.step(13);
    b.step(13);
    expect(a.fingerprint()).toBe(b.fingerprint());
    const saved = a.state();
    const c = Session.restore(a.experiment, saved, { objective: data });
    expect(c.fingerprint()).toBe(a.fingerprint());
    a.step(29);
    c.step(29);
    expect(c.fingerprint()).toBe(a.fingerprint());
    expect(Array.from(c.parameters)).toEqual(Array.from(a.parameters));
  });

  it('different seeds give different batch orders (and fingerprints)', () => {
    const a = make({ optimizer: 'sgd', lr: 0.05, batch: 8 }, 1);
    const b = make({ optimizer: 'sgd', lr: 0.05, batch: 8 }, 2);
    a.step(3);
    b.step(3);
    expect(a.fingerprint()).not.toBe(b.fingerprint());
  });

  it('state() is a deep copy: stepping on does not change it, and mutating it does not change the session', () => {
    const a = make({ optimizer: 'adam', lr: 0.01, batch: 8 });
    a.step(2);
    const s = a.state();
    const copy = Float64Array.from(s.params);
    const fp = a.fingerprint();
    a.step(3);
    expect(Array.from(s.params)).toEqual(Array.from(copy));
    const s2 = a.state();
    s2.params.fill(99);
    s2.optimizer.buffers.m.fill(99);
    (s2.order as Int32Array).fill(0);
    expect(a.fingerprint()).not.toBe(fp);
    const b = Session.restore(a.experiment, a.state(), { objective: data });
    expect(b.fingerprint()).toBe(a.fingerprint());
  });
});

describe('mini-batches', () => {
  it('every row is used exactly once per epoch; the last partial batch (50 mod 8 = 2 rows) is kept', () => {
    const s = make({ optimizer: 'sgd', lr: 0.01, batch: 8 });
    const seen: number[] = [];
    const original = data.gradient.bind(data);
    // the session reuses its row buffer, so copy the rows at call time
    const spy = jest.spyOn(data, 'gradient').mockImplementation((w, out, rows) => {
      seen.push(...Array.from(rows as Int32Array));
      return original(w, out, rows);
    });
    s.step(7);
    spy.mockRestore();
    expect(seen.length).toBe(50);
    expect([...seen].sort((x, y) => x - y)).toEqual(Array.from({ length: 50 }, (_, i) => i));
    expect(s.state().epoch).toBe(1);
    expect(s.state().cursor).toBe(0);
  });

  it('the next epoch uses a different permutation', () => {
    const s = make({ optimizer: 'sgd', lr: 0.01, batch: 10 });
    const first = Array.from(s.state().order as Int32Array);
    s.step(5);
    const second = Array.from(s.state().order as Int32Array);
    expect(second).not.toEqual(first);
    expect([...second].sort((x, y) => x - y)).toEqual(Array.from({ length: 50 }, (_, i) => i));
  });
});

describe('step records', () => {
  it('fills every field; record.step counts updates; loss is the full-batch loss after the update', () => {
    const s = make({ optimizer: 'sgd', lr: 0.1, batch: 10 });
    const r0 = s.initialRecord();
    expect(r0.step).toBe(0);
    expect(Number.isNaN(r0.batchLoss)).toBe(true);
    expect(r0.updateNorm).toBe(0);
    const before = Float64Array.from(s.parameters);
    const [r1] = s.step();
    expect(r1.step).toBe(1);
    expect(r1.loss).toBe(data.value(s.parameters));
    expect(r1.batchLoss).toBeGreaterThan(0);
    expect(r1.lr).toBe(0.1);
    expect(r1.evaluations).toBe(1);
    expect(r1.ms).toBeGreaterThanOrEqual(0);
    let d2 = 0;
    for (let i = 0; i < 6; i++) d2 += (s.parameters[i] - before[i]) ** 2;
    expect(r1.updateNorm).toBeCloseTo(Math.sqrt(d2), 14);
    expect(r1.updateNorm).toBeCloseTo(0.1 * r1.gradNorm, 14); // plain SGD: ‖Δw‖ = η‖g‖ (common practice)
    expect(r1.layers.map((l) => l.layer)).toEqual([0, 1]);
    for (const l of r1.layers) {
      expect(l.weightNorm).toBeGreaterThan(0);
      expect(l.gradNorm).toBeGreaterThan(0);
      expect(l.updateRatio).toBeGreaterThan(0);
    }
  });

  it('step(n) returns n records with consecutive step numbers and honours shouldStop between updates', () => {
    const s = make({ optimizer: 'sgd', lr: 0.1 });
    expect(s.step(4).map((r) => r.step)).toEqual([1, 2, 3, 4]);
    let calls = 0;
    const recs = s.step(10, { shouldStop: () => ++calls >= 3 });
    expect(recs.length).toBe(3);
    const progress: number[] = [];
    s.step(3, { onProgress: (d) => progress.push(d) });
    expect(progress).toEqual([1, 2, 3]);
  });

  it('runUntil: steps, loss-below, grad-norm-below, stopped', () => {
    const s = make({ optimizer: 'sgd', lr: 0.5 });
    expect(s.runUntil({ kind: 'steps', count: 5 }, 100)).toMatchObject({ reason: 'condition' });
    expect(s.stepCount).toBe(5);
    const r = s.runUntil({ kind: 'grad-norm-below', value: 1e-6 }, 5000);
    expect(r.reason).toBe('condition');
    expect(r.records[r.records.length - 1].gradNorm).toBeLessThan(1e-6);
    expect(s.runUntil({ kind: 'loss-below', value: -1 }, 7).reason).toBe('max-steps');
    expect(s.runUntil({ kind: 'loss-below', value: -1 }, 7, { shouldStop: () => true }).reason).toBe('stopped');
  });
});

describe('restore refuses states it cannot continue', () => {
  const base = make({ optimizer: 'adam', lr: 0.01, batch: 8 });
  base.step(3);
  const good = base.state();
  const exp = base.experiment;
  const restore = (mutate: (s: ReturnType<Session['state']>) => void): (() => Session) => () => {
    const s = base.state();
    mutate(s);
    return Session.restore(exp, s, { objective: data });
  };
  it.each<[string, (s: ReturnType<Session['state']>) => void, string]>([
    ['wrong parameter count', (s) => { s.params = new Float64Array(5); }, 'state.params has length 5, the objective expects 6'],
    ['wrong optimizer kind', (s) => { s.optimizer.kind = 'sgd'; }, "state.optimizer.kind is 'sgd' but recipe.optimizer is 'adam'"],
    ['missing buffer', (s) => { delete s.optimizer.buffers.v; }, "state.optimizer.buffers.v is missing (the recipe's adam needs it)"],
    ['short buffer', (s) => { s.optimizer.buffers.m = new Float64Array(2); }, 'state.optimizer.buffers.m has length 2, expected 6'],
    ['duplicate rows in the order', (s) => { (s.order as Int32Array)[1] = (s.order as Int32Array)[0]; }, 'state.order is not a permutation of 0…49 (entry'],
    ['row out of range', (s) => { (s.order as Int32Array)[4] = 50; }, 'state.order is not a permutation of 0…49 (entry 4 is 50)'],
    ['cursor out of range', (s) => { s.cursor = 50; }, 'state.cursor must be an integer in [0, 49], got 50'],
    ['negative step', (s) => { s.step = -1; }, 'state.step must be a non-negative integer, got -1']
  ])('%s', (_n, mutate, message) => {
    expect(restore(mutate)).toThrow(message);
  });
  it('the untouched state restores', () => {
    expect(Session.restore(exp, good, { objective: data }).fingerprint()).toBe(base.fingerprint());
  });
  it('the session keeps its own copy of the recipe', () => {
    const e = experiment({ optimizer: 'sgd', lr: 0.1 });
    const s = Session.create(e, { objective: data, initial: new Float64Array(6) });
    e.recipe.lr = 100;
    expect(s.step()[0].lr).toBe(0.1);
  });
});
