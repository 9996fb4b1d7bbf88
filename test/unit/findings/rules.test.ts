/**
 * Every rule fires on a case with a known answer and stays quiet on one beside it; healthy recipes
 * raise no warning. Scenarios are our own (scenarios.ts); expected numbers come from closed forms
 * named beside each check, or from the engine's own readouts where the rule only compares them
 * (those readouts are checked against outside references in readouts.test.ts and
 * test/reference/probe).
 */
import { diagnoseExperiment, evaluateFindings, roundDown, setupFacts, sharpnessPointFrom, THRESHOLDS, auditFacts, type Evidence, type Finding, type FindingId, type SharpnessPoint } from '../../../src/core/probe/findings';
import { RULES } from '../../../src/core/probe/findings/engine';
import { auditGradient } from '../../../src/core/probe/gradcheck';
import type { Activation } from '../../../src/core/model/activations';
import { activation } from '../../../src/core/model/activations';
import type { StepRecord } from '../../../src/core/state';
import { tinyNet } from '../model/fixtures';
import { experimentOf, kilnSpec, seedRows, seedSpec } from './scenarios';

const quadratic = (diag: number[], recipe: string): string =>
  `seed: 1\nmodel:\n  objective: quadratic\n  matrix: ${JSON.stringify(diag.map((d, i) => diag.map((_, j) => (i === j ? d : 0))))}\nrecipe: ${recipe}\n`;

const ids = (fs: Finding[]): FindingId[] => fs.map((f) => f.id);
const only = (fs: Finding[], id: FindingId): Finding[] => fs.filter((f) => f.id === id);
const diagnose = (text: string, steps = 100) => diagnoseExperiment(experimentOf(text), { steps, curvaturePoints: 11 });

function rec(step: number, loss: number, layers: [number, number, number][] = [], heldOutLoss?: number): StepRecord {
  const r: StepRecord = { step, loss, batchLoss: NaN, gradNorm: 1, updateNorm: 1, lr: 0.1, evaluations: 1, ms: 0, layers: layers.map(([weightNorm, gradNorm, updateRatio], layer) => ({ layer, weightNorm, gradNorm, updateRatio })) };
  if (heldOutLoss !== undefined) r.heldOutLoss = heldOutLoss;
  return r;
}

/** Evidence around the facts of a small kiln network (two layers, tanh then linear). */
function evidence(extra: Partial<Evidence>): Evidence {
  return { setup: setupFacts(experimentOf(kilnSpec())), trajectory: [rec(0, 1)], ...extra };
}

const point = (step: number, largestStableLr: number, lr: number): SharpnessPoint => ({ step, sharpness: 2 / largestStableLr, errorBound: 0, lr, largestStableLr, margin: lr / largestStableLr, formula: '2/λmax' });

describe('rounding of proposed numbers', () => {
  it.each([[0.0123456, 0.0123], [0.18000000000000002, 0.18], [0.27, 0.27], [0.2699999, 0.269], [123456, 123000], [9.999, 9.99]])('%p rounds down to %p', (x, y) => {
    expect(roundDown(x)).toBe(y);
  });
});

describe('the rule table', () => {
  it('has one rule per finding id, each with a description and thresholds that exist', () => {
    expect(RULES).toHaveLength(15);
    expect(new Set(RULES.map((r) => r.id)).size).toBe(15);
    for (const r of RULES) {
      expect(r.measures.length).toBeGreaterThan(10);
      for (const t of r.thresholds) expect(THRESHOLDS[t].source).toMatch(/^(source: |common practice \(no single source\)|from memory: )/);
    }
  });

  it('every threshold names its source in the form of CHECKS.md', () => {
    const all = Object.values(THRESHOLDS);
    expect(all.length).toBeGreaterThan(20);
    for (const t of all) expect(t.source).toMatch(/^(source: |common practice \(no single source\)|from memory: )/);
  });
});

describe('step-size-unstable', () => {
  // source: gradient descent on ½wᵀAw is stable iff η < 2/λmax (Nocedal & Wright 2006, ch. 3); λmax = 10 → limit 0.2.
  it('fires on a quadratic with λmax = 10 stepped at η = 0.25 > 2/λmax = 0.2, proposing 0.9 × 0.2 from step 0', () => {
    const fs = only(diagnose(quadratic([10, 1], '{ optimizer: sgd, lr: 0.25 }'), 20).findings, 'step-size-unstable');
    expect(fs).toHaveLength(1);
    const f = fs[0];
    expect(f.step).toBe(0);
    expect(f.measured).toBe(0.25);
    expect(f.threshold).toBeCloseTo(0.2, 10);
    expect(f.severity).toBe('problem');
    expect(f.source).toBe(THRESHOLDS.stabilityMargin.source);
    expect(f.proposal).toEqual({ atStep: 0, set: { lr: 0.18 } });
  });

  it('stays quiet at η = 0.15 < 0.2', () => {
    expect(ids(diagnose(quadratic([10, 1], '{ optimizer: sgd, lr: 0.15 }'), 20).findings)).not.toContain('step-size-unstable');
  });

  it('uses heavy-ball momentum\'s limit 2(1 + μ)/λmax', () => {
    // source: Polyak 1964 — with μ = 0.5 and λmax = 10 the limit is 0.3, so η = 0.25 is stable and η = 0.35 is not.
    expect(ids(diagnose(quadratic([10, 1], '{ optimizer: sgd, lr: 0.25, momentum: 0.5 }'), 20).findings)).not.toContain('step-size-unstable');
    const f = only(diagnose(quadratic([10, 1], '{ optimizer: sgd, lr: 0.35, momentum: 0.5 }'), 20).findings, 'step-size-unstable')[0];
    expect(f.threshold).toBeCloseTo(0.3, 10);
  });

  it('turns a sharpness measured elsewhere into a point against the recipe\'s limit', () => {
    // source: 2/λmax for plain gradient descent (Nocedal & Wright 2006, ch. 3): λ = 10 → 0.2, margin 0.25/0.2.
    const p = sharpnessPointFrom(experimentOf(quadratic([10, 1], '{ optimizer: sgd, lr: 0.25 }')).recipe, 7, 10, 1e-9, 0.25);
    expect(p).toEqual({ step: 7, sharpness: 10, errorBound: 1e-9, lr: 0.25, largestStableLr: 0.2, margin: 1.25, formula: '2/λmax' });
    expect(sharpnessPointFrom(experimentOf(quadratic([10, 1], '{ optimizer: sgd, lr: 0.25 }')).recipe, 0, -1, 0, 0.25).largestStableLr).toBeNull();
  });

  it('branches from the measurement before a mid-run crossing, at 0.9 × the crossed limit', () => {
    const fs = evaluateFindings(evidence({ trajectory: [rec(0, 1), rec(10, 0.5), rec(20, 0.4), rec(30, 0.6)], sharpness: [point(0, 0.5, 0.35), point(10, 0.4, 0.35), point(20, 0.3, 0.35)] }));
    const f = only(fs, 'step-size-unstable')[0];
    expect(f.step).toBe(20);
    expect(f.severity).toBe('problem'); // the loss rose after the crossing
    expect(f.proposal).toEqual({ atStep: 10, set: { lr: 0.27 } });
  });
});

describe('diverged', () => {
  it('fires at step 9 of the unstable quadratic, proposing 0.9 × 2/λmax from the last good checkpoint', () => {
    // source: closed form — w1 ← (1 − 2.5)·w1, w2 ← 0.75·w2, so loss_k / loss_0 = (10·2.25^k + 0.5625^k)/11:
    // 597 at k = 8 and 1343 at k = 9, the first above the thousandfold bound.
    const r = diagnose(quadratic([10, 1], '{ optimizer: sgd, lr: 0.25 }'), 20);
    const f = only(r.findings, 'diverged')[0];
    expect(f.step).toBe(9);
    expect(f.measured).toBeCloseTo((10 * 2.25 ** 9 + 0.5625 ** 9) / 11, 6);
    expect(f.threshold).toBe(1000);
    expect(f.proposal).toEqual({ atStep: 0, set: { lr: 0.18 } });
    // Findings measured after the divergence describe blown-up weights and are left out.
    expect(r.findings.every((x) => x.step === null || x.step <= 9)).toBe(true);
  });

  it('fires on a non-finite loss (measured ∞) and stays quiet on a falling loss', () => {
    const f = only(evaluateFindings(evidence({ trajectory: [rec(0, 1), rec(1, 2), rec(2, NaN)] })), 'diverged')[0];
    expect(f.measured).toBe(Infinity);
    expect(f.step).toBe(2);
    expect(f.proposal).toBeNull(); // no limit was measured
    expect(ids(evaluateFindings(evidence({ trajectory: [rec(0, 1), rec(1, 0.5), rec(2, 0.25)] })))).not.toContain('diverged');
  });
});

describe('plateau', () => {
  it('fires when the loss stays at the constant prediction\'s and names a rate far below its limit as the cause', () => {
    // lr 1e-4 against a limit near 0.3: the loss falls 2-3% per quarter run, still above the constant prediction's.
    const r = diagnose(kilnSpec({ recipe: '{ optimizer: sgd, lr: 0.0001 }' }));
    const f = only(r.findings, 'plateau')[0];
    expect(f.severity).toBe('problem');
    expect(Math.abs(f.measured)).toBeLessThan(THRESHOLDS.plateauDecrease.value);
    const limit = r.evidence.sharpness![r.evidence.sharpness!.length - 1].largestStableLr!;
    expect(f.proposal).toEqual({ atStep: 0, set: { lr: roundDown(THRESHOLDS.fittedLrFraction.value * limit) } });
  });

  it('stays quiet while the loss falls well below the constant prediction\'s', () => {
    expect(ids(diagnose(kilnSpec()).findings)).not.toContain('plateau');
  });
});

describe('saturated-units and init-scale', () => {
  it('an oversized tanh init (gain 6) saturates layer 0 and is 6× off the fan-in rule', () => {
    const r = diagnose(kilnSpec({ model: '  init: lecun-normal\n  gain: 6' }), 20);
    const sat = only(r.findings, 'saturated-units');
    expect(sat).toHaveLength(1);
    expect(sat[0].layer).toBe(0);
    expect(sat[0].step).toBe(0);
    expect(sat[0].measured).toBe(r.evidence.activationsStart!.layers[0].saturatedShare);
    expect(sat[0].measured).toBeGreaterThan(THRESHOLDS.saturatedShare.value);
    const init = only(r.findings, 'init-scale');
    expect(init).toHaveLength(1);
    // source: LeCun 1998 — lecun-normal is the fan-in rule for tanh and linear layers, so the ratio is the gain.
    expect(init[0].measured).toBeCloseTo(6, 12);
    expect(init[0].threshold).toBe(2);
    expect(init[0].proposal).toEqual({ atStep: 0, set: { 'model.init': 'lecun-normal', 'model.gain': 1 } });
    expect(sat[0].proposal).toEqual(init[0].proposal);
  });

  it('an undersized init (gain 0.3) is flagged below the rule, a gain of 1.5 is not', () => {
    const low = only(diagnose(kilnSpec({ model: '  init: lecun-normal\n  gain: 0.3' }), 5).findings, 'init-scale')[0];
    expect(low.measured).toBeCloseTo(0.3, 12);
    expect(low.threshold).toBe(0.5);
    const ok = diagnose(kilnSpec({ model: '  init: lecun-normal\n  gain: 1.5' }), 5).findings;
    expect(ids(ok)).not.toContain('init-scale');
    expect(ids(ok)).not.toContain('saturated-units');
  });

  it('saturation that appears only later is reported at its step without a proposal', () => {
    const start = { step: 0, rows: 4, layers: [{ layer: 0, activation: 'tanh' as const, units: 2, rows: 4, preMean: 0, preSpread: 1, postMean: 0, postSpread: 0.5, saturatedShare: 0.05, saturationThreshold: 2, deadShare: null, deadUnits: [], histogram: { edges: [], counts: [], below: 0, above: 0, nonFinite: 0 } }] };
    const now = { ...start, step: 50, layers: [{ ...start.layers[0], saturatedShare: 0.8 }] };
    const fs = only(evaluateFindings(evidence({ activationsStart: start, activationsNow: now })), 'saturated-units');
    expect(fs).toHaveLength(1);
    expect(fs[0].step).toBe(50);
    expect(fs[0].proposal).toBeNull();
  });
});

describe('dead-units', () => {
  // Explicit weights with biases −6 on six of eight ReLU units of the seed sorter: those six are
  // inactive on every row whenever |w·x| < 6, which holds for inputs of spread ~1 and weights below 1.
  const weights = (bias: number) => {
    const w = [[0.9, -0.4], [-0.7, 0.8], [0.5, 0.6], [-0.6, -0.5], [0.8, 0.3], [-0.3, 0.9], [0.4, -0.8], [-0.9, -0.2]];
    const out = [[0.5, -0.3, 0.2, 0.4, -0.5, 0.3, -0.2, 0.1], [-0.4, 0.5, -0.1, 0.2, 0.3, -0.5, 0.4, -0.3], [0.2, 0.1, 0.5, -0.4, -0.2, 0.4, 0.3, 0.5]];
    return `  weights:\n    - { weight: ${JSON.stringify(w)}, bias: ${JSON.stringify([0, 0, bias, bias, bias, bias, bias, bias])} }\n    - { weight: ${JSON.stringify(out)}, bias: [0, 0, 0] }`;
  };

  it('fires on the six dead units (75%) and proposes zeroing their biases', () => {
    const x = seedRows(36, 5).x;
    // source: closed form — every |w·x| ≤ (|w1| + |w2|)·max|x| < 6 on these rows, so a = w·x − 6 < 0 throughout.
    expect(Math.max(...x.flat().map(Math.abs)) * 1.3).toBeLessThan(6);
    const r = diagnose(seedSpec({ model: weights(-6) }), 5);
    const f = only(r.findings, 'dead-units')[0];
    expect(f.layer).toBe(0);
    expect(f.measured).toBe(0.75);
    expect(f.proposal).toEqual({ atStep: 0, set: Object.fromEntries([2, 3, 4, 5, 6, 7].map((u) => [`model.weights[0].bias[${u}]`, 0])) });
  });

  it('stays quiet with zero biases and with He-initialized units', () => {
    expect(ids(diagnose(seedSpec({ model: weights(0) }), 5).findings)).not.toContain('dead-units');
    expect(ids(diagnose(seedSpec(), 5).findings)).not.toContain('dead-units');
  });
});

describe('inputs-unscaled', () => {
  it('fires on raw kiln readings (°C against humidity shares) and proposes standardizing with a fitted lr', () => {
    const r = diagnose(kilnSpec({ scaled: false, recipe: '{ optimizer: sgd, lr: 0.00001 }' }), 5);
    const f = only(r.findings, 'inputs-unscaled')[0];
    const spreads = r.evidence.data!.features.map((x) => x.spread);
    expect(f.measured).toBeCloseTo(Math.max(...spreads) / Math.min(...spreads), 12);
    expect(f.threshold).toBe(100);
    const fit = r.evidence.standardized!;
    expect(fit.largestStableLr).toBeGreaterThan(0);
    expect(f.proposal!.atStep).toBe(0);
    expect(f.proposal!.set['data.standardize']).toBe(true);
    expect(f.proposal!.set.lr).toBeLessThanOrEqual(THRESHOLDS.fittedLrFraction.value * fit.largestStableLr!);
    expect(f.proposal!.set.lr).toBeGreaterThan(0.99 * THRESHOLDS.fittedLrFraction.value * fit.largestStableLr!);
  });

  it('fires on a large offset alone: a feature at 800 ± 20', () => {
    const e = evidence({ data: { rows: 3, inputs: 2, heldOutRows: 0, standardized: false, features: [{ index: 0, mean: 800, spread: 20, min: 780, max: 820, constant: false }, { index: 1, mean: 0, spread: 10, min: -10, max: 10, constant: false }], constantFeatures: [], duplicateRows: 0, duplicateShare: 0, conflictingRows: 0, heldOutInTraining: 0, spreadRatio: 2, largestOffset: { feature: 0, ratio: 40 }, classes: null } });
    const f = only(evaluateFindings(e), 'inputs-unscaled')[0];
    expect(f.measured).toBe(40);
    expect(f.threshold).toBe(THRESHOLDS.inputOffsetRatio.value);
    expect(f.proposal).toEqual({ atStep: 0, set: { 'data.standardize': true } }); // no fitted limit in this evidence
  });

  it('stays quiet once data.standardize is on', () => {
    expect(ids(diagnose(kilnSpec({ scaled: false, standardize: true }), 5).findings)).not.toContain('inputs-unscaled');
  });
});

describe('duplicate-rows', () => {
  it('fires on a data set given twice (share exactly 1/2)', () => {
    const f = only(diagnose(kilnSpec({ duplicate: true }), 2).findings, 'duplicate-rows')[0];
    expect(f.measured).toBe(0.5);
    expect(f.proposal).toBeNull();
  });

  it('stays quiet on the data given once', () => {
    expect(ids(diagnose(kilnSpec(), 2).findings)).not.toContain('duplicate-rows');
  });
});

describe('update-ratio-high and update-ratio-low', () => {
  const flat = (ratios: [number, number], loss = 1) => [rec(0, loss, [[1, 1, 0], [1, 1, 0]]), ...Array.from({ length: 20 }, (_, i) => rec(i + 1, loss, [[1, 1, ratios[0]], [1, 1, ratios[1]]]))];

  it('fires high on a layer moving by half its norm per step, proposing to scale it to the other\'s ratio', () => {
    const f = only(evaluateFindings(evidence({ trajectory: flat([0.5, 1e-3], 0.01) })), 'update-ratio-high');
    expect(f).toHaveLength(1);
    expect(f[0].layer).toBe(0);
    expect(f[0].measured).toBe(0.5);
    // 1 × 1e-3 / 0.5
    expect(f[0].proposal).toEqual({ atStep: 0, set: { 'layers[0].lrScale': 0.002 } });
  });

  it('fires low on a frozen layer while the other moves, and stays quiet when both are within', () => {
    const f = only(evaluateFindings(evidence({ trajectory: flat([1e-3, 1e-8], 0.01) })), 'update-ratio-low');
    expect(f).toHaveLength(1);
    expect(f[0].layer).toBe(1);
    expect(f[0].proposal).toEqual({ atStep: 0, set: { 'layers[1].lrScale': 100000 } });
    const quiet = evaluateFindings(evidence({ trajectory: flat([1e-3, 1e-2], 0.01) }));
    expect(ids(quiet)).not.toContain('update-ratio-low');
    expect(ids(quiet)).not.toContain('update-ratio-high');
  });

  it('stays quiet when every layer is still because training converged', () => {
    expect(ids(evaluateFindings(evidence({ trajectory: flat([1e-8, 1e-8], 1e-6) })))).not.toContain('update-ratio-low');
  });

  it('fires on real runs: a jittering output layer at batch 2, and a first layer slowed 10⁴-fold', () => {
    const high = only(diagnose(kilnSpec({ recipe: '{ optimizer: sgd, lr: 0.25, batch: 2 }' })).findings, 'update-ratio-high');
    expect(high.map((f) => f.layer)).toEqual([1]);
    const low = only(diagnose(kilnSpec({ recipe: '{ optimizer: sgd, lr: 0.05, layers: [{ lrScale: 0.0001 }, { lrScale: 1 }] }' })).findings, 'update-ratio-low');
    expect(low.map((f) => f.layer)).toEqual([0]);
  });
});

describe('vanishing-gradient', () => {
  const sigmoid6 = kilnSpec({ layers: `[${Array(5).fill('{ units: 8, activation: sigmoid }').join(', ')}, { units: 1 }]`, recipe: '{ optimizer: sgd, lr: 0.2 }' });

  it('fires on five sigmoid layers (slope ≤ 1/4 each) and proposes tanh', () => {
    const r = diagnose(sigmoid6);
    const f = only(r.findings, 'vanishing-gradient')[0];
    expect(f.layer).toBe(0);
    // source: each sigmoid layer scales the backward signal by σ′ ≤ 1/4 (with fan-in weights of unit gain),
    // so four layers below the last shrink it by up to 4⁴ = 256 and more: below 1e-2.
    expect(f.measured).toBeLessThan(THRESHOLDS.gradientDepthRatio.value);
    expect(f.measured).toBe(r.evidence.trajectory.slice(0, 10).map((x) => x.layers[0].gradNorm / x.layers[5].gradNorm).sort((a, b) => a - b).slice(4, 6).reduce((a, b) => a + b) / 2);
    expect(f.proposal!.set).toEqual({ ...Object.fromEntries([0, 1, 2, 3, 4].map((l) => [`model.layers[${l}].activation`, 'tanh'])), 'model.init': 'lecun-normal', 'model.gain': 1 });
  });

  it('stays quiet on a two-layer tanh network', () => {
    expect(ids(diagnose(kilnSpec()).findings)).not.toContain('vanishing-gradient');
  });
});

describe('negative-curvature and ill-conditioned', () => {
  it('an indefinite quadratic diag(4, 1, −2): |λmin|/λmax = 0.5', () => {
    // source: the eigenvalues of a diagonal matrix are its entries.
    const f = only(diagnose(quadratic([4, 1, -2], '{ optimizer: sgd, lr: 0.1 }'), 3).findings, 'negative-curvature')[0];
    expect(f.measured).toBeCloseTo(0.5, 10);
    expect(f.severity).toBe('info');
    expect(ids(diagnose(quadratic([4, 1, -0.2], '{ optimizer: sgd, lr: 0.1 }'), 3).findings)).not.toContain('negative-curvature');
  });

  it('a quadratic with spectrum {100, 1, 0.001} has κ = 1e5 and gets L-BFGS; {100, 10, 1} does not', () => {
    const f = only(diagnose(quadratic([100, 1, 0.001], '{ optimizer: sgd, lr: 0.019, momentum: 0.5 }'), 3).findings, 'ill-conditioned')[0];
    expect(f.measured).toBeCloseTo(1e5, 4);
    expect(f.severity).toBe('warning');
    expect(f.proposal).toEqual({ atStep: 3, set: { optimizer: 'lbfgs', lr: 1, momentum: 0 } });
    expect(ids(diagnose(quadratic([100, 10, 1], '{ optimizer: sgd, lr: 0.019 }'), 3).findings)).not.toContain('ill-conditioned');
  });
});

describe('overfitting', () => {
  const memorizer = kilnSpec({ rows: 16, heldOut: 40, noise: 0.3, layers: '[{ units: 48, activation: tanh }, { units: 1 }]', recipe: '{ optimizer: sgd, lr: 0.1 }' });

  it('fires on a wide net memorizing 16 noisy rows, proposing to stop at the held-out minimum', () => {
    const r = diagnose(memorizer, 400);
    const f = only(r.findings, 'overfitting')[0];
    const held = r.evidence.trajectory.map((x) => x.heldOutLoss as number);
    expect(held).toHaveLength(401);
    const best = held.indexOf(Math.min(...held));
    expect(f.measured).toBeCloseTo(held[400] / held[best] - 1, 12);
    expect(f.proposal).toEqual({ atStep: best, set: { 'schedule.kind': 'cosine', 'schedule.steps': best, 'schedule.floor': 0 } });
  });

  it('stays quiet before the held-out loss turns, and on synthetic curves that only fall', () => {
    expect(ids(diagnose(memorizer, 40).findings)).not.toContain('overfitting');
    const t = Array.from({ length: 30 }, (_, s) => rec(s, 1 / (s + 1), [[1, 1, 1e-3]], 2 / (s + 1)));
    expect(ids(evaluateFindings(evidence({ trajectory: t })))).not.toContain('overfitting');
  });
});

describe('gradient-mismatch', () => {
  const tanhOk = activation('tanh');
  // A tanh whose derivative is written as 1 − f instead of 1 − f² (a user's slip).
  const broken: Activation = { ...tanhOk, evaluate(a, f, d1, d2, n) { tanhOk.evaluate(a, f, d1, d2, n); for (let i = 0; i < n; i++) d1[i] = 1 - f[i]; } };

  it('fires as a problem in the layers the wrong derivative corrupts', () => {
    const { net, w } = tinyNet('tanh', 'mse', 3, 0, { activationOf: (l) => (l === 1 ? broken : undefined) });
    const fs = only(evaluateFindings(evidence({ audit: auditFacts(auditGradient(net, w), 0) })), 'gradient-mismatch');
    expect(fs.map((f) => f.layer)).toContain(1);
    expect(fs.find((f) => f.layer === 1)!.severity).toBe('problem');
    expect(fs.every((f) => f.measured > THRESHOLDS.auditAcceptable.value)).toBe(true);
  });

  it('stays quiet on the correct network', () => {
    const { net, w } = tinyNet('tanh', 'mse', 3, 0);
    expect(only(evaluateFindings(evidence({ audit: auditFacts(auditGradient(net, w), 0) })), 'gradient-mismatch')).toHaveLength(0);
  });
});

describe('healthy recipes', () => {
  it.each([
    ['kiln, inputs scaled by hand, lecun-normal, lr 0.05', kilnSpec()],
    ['kiln, raw inputs with data.standardize, lr 0.05', kilnSpec({ scaled: false, standardize: true })],
    ['kiln, heavy-ball momentum 0.5 at lr 0.05', kilnSpec({ recipe: '{ optimizer: sgd, lr: 0.05, momentum: 0.5 }' })],
    ['seed sorter, He init, ReLU, lr 0.1', seedSpec()],
  ])('%s raises no warning and no problem', (_name, text) => {
    const r = diagnose(text);
    // lr well below the limit: the premise of a healthy recipe, checked rather than assumed.
    expect(r.evidence.sharpness!.every((p) => p.margin! < 0.5)).toBe(true);
    expect(r.findings.filter((f) => f.severity !== 'info')).toEqual([]);
  });
});
