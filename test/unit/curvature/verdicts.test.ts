/**
 * The curvature readout's verdicts, decided once in core: stable/unstable for one measured
 * learning rate, and the first crossing of a sharpness trace. The rule itself is a published
 * fact (below); the cases are chosen on either side of it and at it.
 */
import { stabilityBound } from '../../../src/core/probe/curvature/stability';
import { aboveLimit, eigenvalueLimit, eigenvaluesAbove, stabilitySentence, stabilityVerdict, traceSentence, traceVerdict } from '../../../src/core/probe/curvature/verdicts';
import { offFanInRule } from '../../../src/core/probe/init-check';
import { parseSpec, TEMPLATE_SPEC } from '../../../src/experiment';

const recipe = (() => {
  const p = parseSpec(TEMPLATE_SPEC);
  if (!p.ok) throw new Error('template does not parse');
  return p.experiment.recipe;
})();

describe('stability verdict of one measurement', () => {
  // source: gradient descent on f(w) = c/2·w² converges iff 0 < η < 2/c (Nocedal & Wright 2006, ch. 3; CHECKS.md).
  it.each([
    [0.1, 10, 'stable'],
    [0.199, 10, 'stable'],
    [0.2, 10, 'unstable'],
    [0.5, 10, 'unstable']
  ])('η = %p on sharpness %p is %s', (lr, lambda, verdict) => {
    const b = stabilityBound({ ...recipe, lr }, lambda, lr);
    expect(stabilityVerdict(b)).toBe(verdict);
    expect(stabilitySentence(b)).toContain(verdict === 'stable' ? ': stable on the local quadratic model.' : ': UNSTABLE on the local quadratic model');
  });

  it('says when no rule applies and when there is no positive curvature', () => {
    const lbfgs = stabilityBound({ ...recipe, optimizer: 'lbfgs' }, 10, 0.1);
    expect(stabilityVerdict(lbfgs)).toBe('not-applicable');
    expect(stabilitySentence(lbfgs)).toBe('Step-size limit: the rule does not apply to this optimizer.');
    const flat = stabilityBound(recipe, -1, 0.1);
    expect(stabilityVerdict(flat)).toBe('stable');
    expect(stabilitySentence(flat)).toBe('η = 0.1; no positive curvature, so the quadratic model sets no limit: stable on the local quadratic model.');
  });

  it('writes the numbers of the bound', () => {
    // 2/λmax with λmax = 8: largest stable η = 0.25; η = 0.3 → ratio 1.2 (source: the 2/λmax rule above).
    expect(stabilitySentence(stabilityBound(recipe, 8, 0.3))).toBe('η = 0.3; limit 2/λmax → largest stable η ≈ 0.25; η / limit = 1.2: UNSTABLE on the local quadratic model: the sharpest directions grow each step.');
  });
});

describe('sharpness trace verdict', () => {
  it('finds the first point above its limit', () => {
    const v = traceVerdict([
      { step: 0, sharpness: 1, limit: 2 },
      { step: 5, sharpness: 2.5, limit: 2 },
      { step: 9, sharpness: 3, limit: 2 }
    ]);
    expect(v).toEqual({ kind: 'crossed', measured: 3, step: 5, sharpness: 2.5, limit: 2 });
    expect(traceSentence(v)).toBe('The sharpness crossed the stability limit at step 5 (2.5 > 2).');
  });

  it('a point at its limit has not crossed it', () => {
    expect(traceVerdict([{ step: 0, sharpness: 2, limit: 2 }, { step: 3, sharpness: 1.9, limit: 2 }])).toEqual({ kind: 'within', measured: 2, from: 0, to: 3 });
    expect(traceSentence({ kind: 'within', measured: 2, from: 0, to: 3 })).toBe('Over 2 measurements with a limit (steps 0–3) the sharpness stayed below the stability limit.');
  });

  it('does not call a trace without limits stable', () => {
    const v = traceVerdict([{ step: 0, sharpness: 4, limit: null }, { step: 1, sharpness: 5, limit: null }]);
    expect(v).toEqual({ kind: 'no-limit', measured: 2 });
    expect(traceSentence(v)).toMatch(/^2 sharpness measurements; no learning-rate limit applies/);
  });
});

describe('which points the figures mark (decided here, drawn by ui/)', () => {
  // source: the same rule — an eigen-direction with λ > 2/η grows under gradient descent (Nocedal & Wright 2006, ch. 3).
  it('marks a sharpness strictly above a finite limit, and nothing without one', () => {
    expect(aboveLimit(20.000001, 20)).toBe(true);
    expect(aboveLimit(20, 20)).toBe(false);
    expect(aboveLimit(19, 20)).toBe(false);
    expect(aboveLimit(1e9, null)).toBe(false);
    expect(aboveLimit(Number.NaN, 20)).toBe(false);
    expect(aboveLimit(1, Number.POSITIVE_INFINITY)).toBe(false);
  });

  it('draws the eigenvalue limit line at 2/η for gradient descent and none on a preconditioned bound', () => {
    const gd = stabilityBound({ ...recipe, lr: 0.1 }, 10, 0.1);
    expect(eigenvalueLimit(gd)).toBeCloseTo(2 / 0.1, 12);
    expect(eigenvaluesAbove([25, 20, 19.9, -3], gd)).toEqual([true, false, false, false]);
    const adam = stabilityBound({ ...recipe, optimizer: 'adam', lr: 0.1 }, 10, 0.1);
    expect(adam.preconditioned).toBe(true);
    expect(eigenvalueLimit(adam)).toBeNull();
    expect(eigenvaluesAbove([1e9], adam)).toEqual([false]);
  });
});

describe('the initialization check marks a layer off its fan-in rule beyond 2x either way', () => {
  // common practice (no single source): the check's band is [1/2, 2] times the rule's spread (INIT_RULE_FACTOR).
  it.each([
    [1, false],
    [2, false],
    [0.5, false],
    [2.0001, true],
    [0.4999, true],
    [Number.NaN, true]
  ])('ratio %p off the rule: %p', (ratio, off) => {
    expect(offFanInRule(ratio)).toBe(off);
  });
});
