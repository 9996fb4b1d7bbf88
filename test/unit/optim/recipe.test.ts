/** Recipe features: schedules, warm-up, clipping, per-layer scales, curvature rows. */
import { learningRate, scheduleFactor, warmupFactor } from '../../../src/core/optim/schedule';
import { powInt } from '../../../src/core/optim/powers';
import { Session } from '../../../src/core/session';
import type { Recipe, ScheduleSetup } from '../../../src/core/setup';
import { experiment, leastSquares, recipe, TestQuadratic } from './fixtures';

describe('schedules', () => {
  // source: torch.optim.lr_scheduler StepLR / ExponentialLR closed forms (PyTorch 1.13 docs);
  // inverse-time decay 1/(1 + d·t) (common practice); cosine annealing without restarts
  // (Loshchilov & Hutter, SGDR, ICLR 2017, eq. 5 with η_min = floor·η).
  it.each<[string, ScheduleSetup, number, number]>([
    ['constant', { kind: 'constant' }, 123, 1],
    ['step t=0', { kind: 'step', every: 10, factor: 0.5 }, 0, 1],
    ['step t=9', { kind: 'step', every: 10, factor: 0.5 }, 9, 1],
    ['step t=10', { kind: 'step', every: 10, factor: 0.5 }, 10, 0.5],
    ['step t=35', { kind: 'step', every: 10, factor: 0.5 }, 35, 0.125],
    ['exponential t=3', { kind: 'exponential', gamma: 0.9 }, 3, 0.9 ** 3],
    ['inverse-time t=4', { kind: 'inverse-time', decay: 0.5 }, 4, 1 / 3],
    ['cosine t=0', { kind: 'cosine', steps: 100, floor: 0.1 }, 0, 1],
    ['cosine t=50 (half way)', { kind: 'cosine', steps: 100, floor: 0.1 }, 50, 0.55],
    ['cosine t=100', { kind: 'cosine', steps: 100, floor: 0.1 }, 100, 0.1],
    ['cosine t=500 holds the floor', { kind: 'cosine', steps: 100, floor: 0.1 }, 500, 0.1]
  ])('%s', (_n, sched, t, expected) => {
    expect(scheduleFactor(sched, t)).toBeCloseTo(expected, 14);
  });

  it('linear warm-up reaches full lr at update `warmup` − 1 and never uses lr 0', () => {
    // common practice (Goyal et al. 2017, gradual warm-up)
    expect([0, 1, 2, 3, 4].map((t) => warmupFactor(4, t))).toEqual([0.25, 0.5, 0.75, 1, 1]);
    expect(warmupFactor(0, 0)).toBe(1);
    expect(learningRate(recipe({ lr: 0.2, warmup: 2, schedule: { kind: 'exponential', gamma: 0.5 } }), 0)).toBeCloseTo(0.2 * 0.5 * 1, 15);
  });

  it('the session records the learning rate in effect and applies it', () => {
    const s = Session.create(experiment({ lr: 0.1, warmup: 3, schedule: { kind: 'step', every: 2, factor: 0.1 } }), { objective: new TestQuadratic([[1]], [0]), initial: Float64Array.of(1) });
    const lrs = s.step(5).map((r) => r.lr);
    const expected = [0.1 / 3, (0.2 / 3) * 1, 0.1 * 0.1, 0.1 * 0.1, 0.1 * 0.01];
    lrs.forEach((lr, k) => expect(lr).toBeCloseTo(expected[k], 15));
  });
});

describe('gradient clipping by global norm', () => {
  it('caps ‖g‖ at clipNorm for first-order optimizers; the record keeps the raw ‖g‖', () => {
    // source: PyTorch 1.13 torch/nn/utils/clip_grad.py, clip_grad_norm_ (g ← g·c/(‖g‖ + 1e-6) when that ratio is below 1)
    const s = Session.create(experiment({ lr: 0.1, clipNorm: 0.5 }), { objective: new TestQuadratic([[10, 0], [0, 10]], [0, 0]), initial: Float64Array.of(3, 4) });
    const [r] = s.step();
    expect(r.gradNorm).toBeCloseTo(50, 12);
    expect(r.updateNorm).toBeCloseTo((0.1 * 50 * 0.5) / (50 + 1e-6), 14);
    expect(Math.abs(r.updateNorm - 0.05)).toBeGreaterThan(5e-10); // the 1e-6 offset is visible
    expect(s.parameters[0] / s.parameters[1]).toBeCloseTo(3 / 4, 12);
  });
});

describe('per-layer learning-rate scales', () => {
  it('lrScale 0 freezes a layer, 2 doubles its step', () => {
    const data = leastSquares(20, 4); // blocks: layer 0 = w[0..1], layer 1 = w[2..3]
    const base = Session.create(experiment({ lr: 0.1 }), { objective: data, initial: new Float64Array(4).fill(0.3) });
    const scaled = Session.create(experiment({ lr: 0.1, layers: [{ lrScale: 0 }, { lrScale: 2 }] }), { objective: data, initial: new Float64Array(4).fill(0.3) });
    base.step();
    const [r] = scaled.step();
    expect(Array.from(scaled.parameters.subarray(0, 2))).toEqual([0.3, 0.3]);
    for (let i = 2; i < 4; i++) expect(scaled.parameters[i] - 0.3).toBeCloseTo(2 * (base.parameters[i] - 0.3), 15);
    expect(r.layers[0].updateRatio).toBe(0);
    expect(r.layers[1].updateRatio).toBeGreaterThan(0);
  });
});

describe('curvature rows', () => {
  const data = leastSquares(50, 3);
  const make = (cb: Recipe['curvatureBatch'], seed = 5): Session => Session.create(experiment({ curvatureBatch: cb, batch: 10 }, seed), { objective: data, initial: new Float64Array(3) });
  it('a number draws a fixed, sorted subset of distinct rows once from the seed', () => {
    const a = make(12).curvatureRows() as Int32Array;
    expect(a.length).toBe(12);
    expect(new Set(a).size).toBe(12);
    for (let i = 1; i < a.length; i++) expect(a[i]).toBeGreaterThan(a[i - 1]);
    expect(Array.from(make(12).curvatureRows() as Int32Array)).toEqual(Array.from(a));
    expect(Array.from(make(12, 6).curvatureRows() as Int32Array)).not.toEqual(Array.from(a));
    const s = make(12);
    s.step(9);
    expect(Array.from(s.curvatureRows() as Int32Array)).toEqual(Array.from(a));
  });
  it("'full' and 'same' have no fixed subset", () => {
    expect(make('full').curvatureRows()).toBeUndefined();
    expect(make('same').curvatureRows()).toBeUndefined();
  });
  it('drawing curvature rows does not shift the batch order', () => {
    expect(Array.from(make(12).state().order as Int32Array)).toEqual(Array.from(make('same').state().order as Int32Array));
  });
});

describe('recipe checks at the core boundary', () => {
  const q = new TestQuadratic([[1]], [0]);
  it.each<[Partial<Recipe>, string]>([
    [{ lr: 0 }, 'recipe.lr must be a positive finite number, got 0'],
    [{ lr: NaN }, 'recipe.lr must be a positive finite number, got null'],
    [{ beta2: 1 }, 'recipe.beta2 must be in [0, 1), got 1'],
    [{ batch: 0 }, "recipe.batch must be 'full' or a positive integer, got 0"],
    [{ layers: [{ lrScale: 1 }, { lrScale: -1 }] }, 'recipe.layers[1].lrScale must be a non-negative number, got -1'],
    [{ schedule: { kind: 'step', every: 0, factor: 0.5 } }, 'recipe.schedule.every must be a positive integer, got 0'],
    [{ schedule: { kind: 'cosine', steps: 10, floor: 2 } }, 'recipe.schedule.floor must be a number in [0, 1] (a fraction of lr), got 2'],
    [{ curvatureBatch: 0 }, "recipe.curvatureBatch must be 'same', 'full' or a positive integer, got 0"]
  ])('%p is refused', (patch, message) => {
    expect(() => Session.create(experiment(patch), { objective: q, initial: Float64Array.of(1) })).toThrow(message);
  });
  it('step counts must be non-negative integers', () => {
    const s = Session.create(experiment(), { objective: q, initial: Float64Array.of(1) });
    expect(() => s.step(1.5)).toThrow('step count must be a non-negative integer, got 1.5');
    expect(() => s.runUntil({ kind: 'steps', count: 1 }, -1)).toThrow('maxSteps must be a non-negative integer, got -1');
    expect(s.step(0)).toEqual([]);
  });
});

describe('powInt (square-and-multiply)', () => {
  // common practice: binary exponentiation; exact where every intermediate is representable
  it.each<[number, number, number]>([[2, 10, 1024], [3, 20, 3486784401], [0.5, 30, 2 ** -30], [7, 0, 1], [-2, 5, -32]])('%p^%p = %p exactly', (x, n, want) => {
    expect(powInt(x, n)).toBe(want);
  });
  it('agrees with Math.pow (V8) within n·ε relative for Adam-like β and large t', () => {
    // source: V8's Math.pow as the reference; bound: each squaring doubles the earlier relative
    // error, so square-and-multiply is accurate to about n·ε (common practice; Higham 2002 §3)
    for (const b of [0.9, 0.99, 0.999, 0.95]) for (const n of [1, 2, 3, 10, 100, 1000, 12345]) {
      if (Math.pow(b, n) < 1e-290) continue; // underflow: both give 0 or a subnormal
      expect(Math.abs(powInt(b, n) - Math.pow(b, n)) / Math.pow(b, n)).toBeLessThanOrEqual((n + 1) * Number.EPSILON);
    }
    // what matters for Adam: 1 − βᵗ to 1e-13 relative
    for (const b of [0.9, 0.999]) for (const n of [1, 10, 1000, 100000]) {
      expect(Math.abs((1 - powInt(b, n)) - (1 - Math.pow(b, n))) / (1 - Math.pow(b, n))).toBeLessThan(1e-13);
    }
  });
  it('rejects non-integer exponents', () => {
    expect(() => powInt(2, 0.5)).toThrow('powInt needs a non-negative integer exponent, got 0.5');
  });
});
