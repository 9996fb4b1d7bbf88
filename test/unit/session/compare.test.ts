/**
 * Comparing branches at matched steps: the step selection, the examples-seen count, the loss
 * verdicts and the first stability crossing, on hand-made records and on a real grove.
 */
import { compareBranches, examplesAt, firstCrossing, Grove, lossVerdict, matchedSteps, SAME_LOSS } from '../../../src/core/session';
import type { CompareInput } from '../../../src/core/session';
import type { StepRecord } from '../../../src/core/state';
import { networkExperiment } from './network-fixture';

const rec = (step: number, loss: number): StepRecord => ({
  step, loss, batchLoss: loss, gradNorm: 1 / (step + 1), updateNorm: 0.1, lr: 0.1, evaluations: 1, ms: 0,
  layers: [{ layer: 0, weightNorm: 1, gradNorm: 0.5, updateRatio: 1e-3 * (step + 1) }]
});

const input = (name: string, steps: number[], forkStep: number | null = null, loss = (s: number) => 1 / (s + 1)): CompareInput => ({
  name, forkStep, batches: [{ from: 0, rows: 10 }], sharpness: [], trajectory: steps.map((s) => rec(s, loss(s)))
});

const range = (a: number, b: number) => Array.from({ length: b - a + 1 }, (_, i) => a + i);

describe('examples seen', () => {
  it('sums rows × updates per batch segment', () => {
    // closed form: 16 rows for updates 1–20, then 64 rows for updates 21–30 → 16·20 + 64·10
    expect(examplesAt(30, [{ from: 0, rows: 16 }, { from: 20, rows: 64 }])).toBe(960);
    expect(examplesAt(20, [{ from: 0, rows: 16 }, { from: 20, rows: 64 }])).toBe(320);
    expect(examplesAt(0, [{ from: 0, rows: 16 }])).toBe(0);
    // a full-batch root (60 rows) and a branch of batch 15 from step 5: 60·5 + 15·3
    expect(examplesAt(8, [{ from: 0, rows: 60 }, { from: 5, rows: 15 }])).toBe(345);
  });
});

describe('loss verdicts', () => {
  it.each([
    [0.5, 1, 'better'],
    [2, 1, 'worse'],
    [1 + 0.5 * SAME_LOSS, 1, 'same'],
    [1 + 2 * SAME_LOSS, 1, 'worse'],
    [NaN, 1, 'diverged'],
    [Infinity, 1, 'diverged'],
    [3, Infinity, 'better'],
    [0, 0, 'same']
  ])('%p against %p is %p', (value, reference, verdict) => {
    expect(lossVerdict(value as number, reference as number)).toBe(verdict);
  });
});

describe('matched steps', () => {
  it('span from the fork to the smallest tip, evenly spaced points inside, only common steps', () => {
    const a = input('main', range(0, 100));
    const b = input('b', range(0, 60), 20);
    const m = matchedSteps([a, b]);
    expect(m.map((x) => x.step)).toEqual([20, 33, 47, 60]);
    expect(m[0].reasons).toEqual(['fork']);
    expect(m[3].reasons).toEqual(['end']);
  });

  it('moves points to the nearest common step when records are thinned', () => {
    const a = input('main', [0, 8, 16, 24, 32, 40, 41, 42]);
    const b = input('b', [...range(0, 42)], 0);
    expect(matchedSteps([a, b]).map((x) => x.step)).toEqual([0, 16, 24, 42]);
  });

  it('adds the latest step every branch measured the sharpness at', () => {
    const a = { ...input('main', range(0, 30)), sharpness: [0, 10, 20].map((step) => ({ step, lambdaMax: 3, sharpness: 3, limit: 2 })) };
    const b = { ...input('b', range(0, 30), 5), sharpness: [5, 10, 15].map((step) => ({ step, lambdaMax: 1, sharpness: 1, limit: 2 })) };
    const m = matchedSteps([a, b]);
    expect(m.find((x) => x.reasons.includes('sharpness'))?.step).toBe(10);
  });
});

describe('first crossing', () => {
  it('is the first point above its limit; points without a limit are not counted', () => {
    const pts = [
      { step: 0, lambdaMax: 1, sharpness: 1, limit: 2 },
      { step: 5, lambdaMax: 9, sharpness: 9, limit: null },
      { step: 10, lambdaMax: 2.5, sharpness: 2.5, limit: 2 },
      { step: 15, lambdaMax: 3, sharpness: 3, limit: 2 }
    ];
    expect(firstCrossing('x', pts)).toEqual({ branch: 'x', step: 10, sharpness: 2.5, limit: 2, measured: 3 });
    expect(firstCrossing('y', pts.slice(0, 2))).toEqual({ branch: 'y', step: null, sharpness: null, limit: null, measured: 1 });
  });
});

describe('compareBranches on a real grove', () => {
  it('reports each branch’s own records at the matched steps and judges them against the reference', () => {
    const g = Grove.create(networkExperiment({ optimizer: 'sgd', lr: 0.5, batch: 'full' }));
    g.step('main', 40);
    g.branch('main', 10, 'small', { lr: 0.05 });
    g.step('small', 30);
    const inputs = ['main', 'small'].map((name): CompareInput => ({
      name, forkStep: g.origin(name)?.step ?? null, batches: [{ from: 0, rows: 64 }], sharpness: [], trajectory: g.trajectory(name)
    }));
    const c = compareBranches(inputs);
    expect(c.reference).toBe('main');
    expect(c.steps.length).toBe(4);
    expect(c.steps[0].step).toBe(10);
    for (const s of c.steps) {
      expect(s.cells).toHaveLength(2);
      const [m, b] = s.cells;
      // recomputed here from the records: the verdict is the sign of the loss difference
      expect(m.loss).toBe(g.trajectory('main')[s.step].loss);
      expect(b.loss).toBe(g.trajectory('small')[s.step].loss);
      expect(b.examples).toBe(64 * s.step);
      expect(m.verdict).toBe('reference');
      expect(b.verdict).toBe(s.step === 10 ? 'same' : b.loss < m.loss ? 'better' : 'worse');
      expect(b.updateRatios).toEqual(g.trajectory('small')[s.step].layers.map((l) => l.updateRatio));
      expect(b.heldOutVerdict).not.toBeNull();
    }
    const last = c.steps[c.steps.length - 1];
    const lowest = last.cells.reduce((a, x) => (x.loss < a.loss ? x : a));
    expect(c.best).toEqual({ step: 40, branch: lowest.branch });
    expect(() => compareBranches(inputs, { reference: 'nope' })).toThrow("the reference branch 'nope' is not among the compared branches (main, small)");
  });
});
