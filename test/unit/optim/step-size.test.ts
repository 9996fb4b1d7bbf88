/**
 * Step-size rules of gradient descent and heavy-ball momentum on quadratics, run through the
 * Session so the sign, schedule and bookkeeping are exercised as users see them.
 */
import { Session } from '../../../src/core/session';
import { experiment, TestQuadratic } from './fixtures';

const c = 4; // curvature of f(w) = c/2·w² (scenario of our own)
function quad1d(lr: number, momentum = 0): Session {
  return Session.create(experiment({ optimizer: 'sgd', lr, momentum }), { objective: new TestQuadratic([[c]], [0]), initial: Float64Array.of(1) });
}

describe('gradient descent on f(w) = c/2·w²', () => {
  // common practice; Nocedal & Wright 2006 ch. 3: w ← (1 − ηc)·w, converges iff 0 < η < 2/c,
  // in one step at η = 1/c, monotonically below 1/c, oscillating between 1/c and 2/c.
  it('η = 1/c reaches the minimum in one step', () => {
    const s = quad1d(1 / c);
    const [r] = s.step();
    expect(s.parameters[0]).toBe(0);
    expect(r.loss).toBe(0);
  });

  it.each([0.3 / c, 0.9 / c])('η = %p (< 1/c) decreases monotonically without sign change', (lr) => {
    const s = quad1d(lr);
    let prev = 1;
    for (let k = 0; k < 30; k++) {
      s.step();
      const w = s.parameters[0];
      expect(w).toBeGreaterThan(0);
      expect(w).toBeLessThan(prev);
      expect(w).toBe(prev - lr * (c * prev)); // exact arithmetic of one update
      prev = w;
    }
  });

  it.each([1.2 / c, 1.9 / c])('η = %p (between 1/c and 2/c) oscillates and converges', (lr) => {
    const s = quad1d(lr);
    let prev = 1;
    s.step(200).forEach(() => undefined);
    const s2 = quad1d(lr);
    for (let k = 0; k < 10; k++) {
      s2.step();
      const w = s2.parameters[0];
      expect(Math.sign(w)).toBe(-Math.sign(prev));
      expect(Math.abs(w)).toBeLessThan(Math.abs(prev));
      prev = w;
    }
    expect(Math.abs(s.parameters[0])).toBeLessThan(Math.abs(1 - lr * c) ** 200 * 1.0000001);
  });

  it.each([2.05 / c, 3 / c])('η = %p (> 2/c) diverges and runUntil(diverged) stops cleanly', (lr) => {
    const s = quad1d(lr);
    const run = s.runUntil({ kind: 'diverged', factor: 1e3 }, 100000);
    expect(run.reason).toBe('diverged');
    const last = run.records[run.records.length - 1];
    expect(last.loss).toBeGreaterThan(1e3 * (c / 2));
    expect(Number.isFinite(last.loss)).toBe(true);
    expect(run.records.length).toBe(s.stepCount);
  });

  it('a non-finite loss stops any run with reason diverged', () => {
    const s = quad1d(1e200 / c);
    const run = s.runUntil({ kind: 'loss-below', value: 1e-12 }, 1000);
    expect(run.reason).toBe('diverged');
    expect(run.records.length).toBeLessThan(1000);
  });

  it('eigen-direction bound: on diag(1, 10) η just below 2/λmax converges, just above diverges', () => {
    // common practice: the bound on a quadratic with Hessian H is 2/λmax.
    const obj = new TestQuadratic([[1, 0], [0, 10]], [0, 0]);
    const below = Session.create(experiment({ lr: 0.199 }), { objective: obj, initial: Float64Array.of(1, 1) });
    expect(below.runUntil({ kind: 'loss-below', value: 1e-20 }, 20000).reason).toBe('condition');
    const above = Session.create(experiment({ lr: 0.201 }), { objective: obj, initial: Float64Array.of(1, 1) });
    expect(above.runUntil({ kind: 'diverged' }, 20000).reason).toBe('diverged');
  });
});

describe('Polyak heavy-ball stability bound 0 < ηλ < 2(1 + β)', () => {
  // source: Polyak 1964 (from memory); PyTorch's form v ← βv + g, w ← w − ηv is the same
  // iteration as w_{k+1} = w_k − ηg_k + β(w_k − w_{k−1}).
  it.each([0.5, 0.9])('β = %p: ηλ = 0.98·2(1+β) converges, 1.02·2(1+β) diverges', (beta) => {
    const bound = (2 * (1 + beta)) / c;
    const ok = quad1d(0.98 * bound, beta);
    expect(ok.runUntil({ kind: 'loss-below', value: 1e-16 }, 100000).reason).toBe('condition');
    const bad = quad1d(1.02 * bound, beta);
    expect(bad.runUntil({ kind: 'diverged' }, 100000).reason).toBe('diverged');
  });

  it('the same ηλ that diverges without momentum converges with β = 0.9', () => {
    expect(quad1d(2.5 / c).runUntil({ kind: 'diverged' }, 10000).reason).toBe('diverged');
    expect(quad1d(2.5 / c, 0.9).runUntil({ kind: 'loss-below', value: 1e-16 }, 10000).reason).toBe('condition');
  });
});
