import { Network } from '../../../src/core/model/network';
import type { DataSetup, NetworkModel } from '../../../src/core/setup';
import type { StepRecord } from '../../../src/core/state';
import { Rng } from '../../../src/core/rng';
import { Session } from '../../../src/core/session';
import { activationHealth, HISTOGRAM_EDGES } from '../../../src/core/probe/activation-health';
import { fanInRuleSpread, initCheck, schemeSpread } from '../../../src/core/probe/init-check';
import { layerBalance } from '../../../src/core/probe/balance';
import { dataChecks } from '../../../src/core/probe/data-checks';
import { gradientNoiseScale } from '../../../src/core/probe/noise-scale';
import { generalization } from '../../../src/core/probe/generalization';
import { THRESHOLDS } from '../../../src/core/probe/findings';
import { experimentOf, kilnSpec } from './scenarios';

const column = (xs: number[], targets: number): DataSetup => ({ rows: xs.length, inputs: 1, targets, x: Float64Array.from(xs), y: new Float64Array(xs.length * targets) });

describe('activation health', () => {
  // One input x ∈ {−3, −1, 0, 1, 3}; unit 0: a = x, unit 1: a = −x + 3 (tanh), so the
  // pre-activations are {−3, −1, 0, 1, 3} and {6, 4, 3, 2, 0}.
  const model: NetworkModel = { kind: 'network', inputs: 1, layers: [{ units: 2, activation: 'tanh' }], init: 'lecun-normal', gain: 1, weights: [{ weight: [[1], [-1]], bias: [0, 3] }] };
  const data = column([-3, -1, 0, 1, 3], 2);
  const net = new Network(model, data, 'mse', 0);
  const w = Float64Array.from([1, -1, 0, 3]);

  it('gives mean, spread, saturated share and histogram counts computed by hand', () => {
    const h = activationHealth(net, model, w, 0);
    expect(h.layers).toHaveLength(1);
    const l = h.layers[0];
    // source: closed form — the ten values sum to 15 (mean 1.5); squared deviations sum to 62.5 (population variance 6.25).
    expect(l.preMean).toBeCloseTo(1.5, 14);
    expect(l.preSpread).toBeCloseTo(2.5, 14);
    // source: closed form — beyond |a| = 2 (the tanh threshold): −3, 3, 6, 4, 3 (2 itself is not beyond): 5 of 10.
    expect(l.saturationThreshold).toBe(THRESHOLDS.tanhSaturation.value);
    expect(l.saturatedShare).toBe(0.5);
    expect(l.deadShare).toBeNull();
    // Bins of width 0.5 from −6: −3 falls in [−3, −2.5) (bin 6), 0 twice in [0, 0.5) (bin 12), 6 at the right edge counts as above.
    expect(l.histogram.edges).toEqual([...HISTOGRAM_EDGES]);
    expect(l.histogram.counts).toHaveLength(24);
    expect(l.histogram.counts[6]).toBe(1);
    expect(l.histogram.counts[12]).toBe(2);
    expect(l.histogram.above).toBe(1);
    expect(l.histogram.counts.reduce((s, c) => s + c, 0) + l.histogram.below + l.histogram.above).toBe(10);
  });

  it('counts ReLU units inactive on every row as dead', () => {
    // unit 0: a = x (alive for x > 0); unit 1: a = −x − 5 ≤ −2; unit 2: a = −1; unit 3: a = x − 2, alive on the last row only.
    const relu: NetworkModel = { ...model, layers: [{ units: 4, activation: 'relu' }], weights: [{ weight: [[1], [-1], [0], [1]], bias: [0, -5, -1, -2] }] };
    const h = activationHealth(new Network(relu, column([-3, -1, 0, 1, 3], 4), 'mse', 0), relu, Float64Array.from([1, -1, 0, 1, 0, -5, -1, -2]));
    expect(h.layers[0].deadShare).toBe(0.5);
    expect(h.layers[0].deadUnits).toEqual([1, 2]);
    expect(h.layers[0].saturatedShare).toBeNull();
  });

  it('counts non-finite pre-activations apart', () => {
    const h = activationHealth(net, model, Float64Array.from([NaN, -1, 0, 3]));
    expect(h.layers[0].histogram.nonFinite).toBe(5);
    expect(h.layers[0].preMean).toBeCloseTo(15 / 5, 14);
  });
});

describe('initialization check', () => {
  it.each([
    // source: LeCun et al. 1998 (1/fan_in), He et al. 2015 (2/fan_in; 2/((1 + s²)·fan_in) for slope s).
    ['tanh', 16, Math.sqrt(1 / 16)],
    ['sigmoid', 9, Math.sqrt(1 / 9)],
    ['linear', 4, Math.sqrt(1 / 4)],
    ['relu', 8, Math.sqrt(2 / 8)],
    ['leaky-relu', 8, Math.sqrt(2 / ((1 + 0.01 ** 2) * 8))],
  ] as const)('fan-in rule for %s at fan-in %d is %f', (act, fanIn, sd) => {
    expect(fanInRuleSpread(act, fanIn)).toBeCloseTo(sd, 15);
  });

  it.each([
    // source: Glorot & Bengio 2010, 2/(fan_in + fan_out); He 2015, 2/fan_in; LeCun 1998, 1/fan_in — times the gain.
    ['glorot-normal', 1, 10, 30, Math.sqrt(2 / 40)],
    ['glorot-uniform', 2, 10, 30, 2 * Math.sqrt(2 / 40)],
    ['he-uniform', 1, 50, 5, Math.sqrt(2 / 50)],
    ['lecun-normal', 0.5, 25, 3, 0.5 * Math.sqrt(1 / 25)],
    // source: a matrix with orthonormal rows (out ≤ in) has entry RMS √(out/(out·in)) = 1/√in.
    ['orthogonal', 1, 20, 5, Math.sqrt(1 / 20)],
  ] as const)('nominal spread of %s at gain %d, fan-in %d, fan-out %d', (scheme, gain, fanIn, fanOut, sd) => {
    expect(schemeSpread(scheme, gain, fanIn, fanOut)).toBeCloseTo(sd, 15);
  });

  it('the chosen candidate is the session\'s own step 0, and the alternatives leave every other stream alone', () => {
    const e = experimentOf(kilnSpec({ model: '  init: glorot-uniform\n  gain: 2' }));
    const before = Session.create(e).fingerprint();
    const c = initCheck(e.setup, e.seed)!;
    expect(Session.create(e).fingerprint()).toBe(before);
    expect(c.chosen.scheme).toBe('glorot-uniform');
    expect(c.chosen.gain).toBe(2);
    expect(c.alternatives.map((a) => a.scheme)).toEqual(['lecun-normal', 'glorot-normal', 'he-normal']);
    const s = Session.create(e);
    const own = activationHealth(s.objective as Network, e.setup.model as NetworkModel, Float64Array.from(s.parameters), 0);
    expect(c.health).toEqual(own);
    expect(c.chosen.layers).toHaveLength(2);
    expect(c.chosen.layers[0].preSpread).toBe(own.layers[0].preSpread);
    // glorot at gain 2 on 3 → 12 tanh: 2·√(2/15) against √(1/3).
    expect(c.chosen.layers[0].ratio).toBeCloseTo((2 * Math.sqrt(2 / 15)) / Math.sqrt(1 / 3), 14);
    // Deterministic: the same seed draws the same alternatives.
    expect(initCheck(e.setup, e.seed)).toEqual(c);
  });

  it('a large drawn layer has the scheme\'s spread within sampling error', () => {
    // 400 inputs → 400 relu units under he-normal: 160 000 normal draws of spread √(2/400).
    const rows = 4;
    const model: NetworkModel = { kind: 'network', inputs: 400, layers: [{ units: 400, activation: 'relu' }], init: 'he-normal', gain: 1 };
    const x = Rng.fromSeed(1).fillNormal(new Float64Array(rows * 400));
    const c = initCheck({ model, data: { rows, inputs: 400, targets: 400, x, y: new Float64Array(rows * 400) }, loss: 'mse', l2: 0 }, 5)!;
    const alt = c.alternatives.find((a) => a.scheme === 'he-normal')!;
    expect(alt.layers[0].weightSpread).toBeCloseTo(Math.sqrt(2 / 400), 15);
    // Pre-activation spread on unit-variance inputs: √(fan_in · 2/fan_in · E[x²]) ≈ √2 (source: a sum of n
    // independent zero-mean terms of variance s² has spread s·√n, CHECKS.md). Sampling: 1600 entries over
    // 4 input rows, relative standard error about 3% (row norms vary by √(2/400) each), so a 10% band.
    expect(alt.layers[0].preSpread).toBeGreaterThan(Math.SQRT2 * 0.9);
    expect(alt.layers[0].preSpread).toBeLessThan(Math.SQRT2 * 1.1);
  });
});

/** A step record with per-layer numbers (invented, for the readouts' arithmetic). */
function rec(step: number, loss: number, layers: [number, number, number][], heldOutLoss?: number): StepRecord {
  const r: StepRecord = { step, loss, batchLoss: NaN, gradNorm: 1, updateNorm: 1, lr: 0.1, evaluations: 1, ms: 0, layers: layers.map(([weightNorm, gradNorm, updateRatio], layer) => ({ layer, weightNorm, gradNorm, updateRatio })) };
  if (heldOutLoss !== undefined) r.heldOutLoss = heldOutLoss;
  return r;
}

describe('layer balance', () => {
  it('tabulates log10 of the update ratios, the gradient ratio to the last layer, and the recent verdicts', () => {
    // Layer 0 moves by 0.5 of its norm per step (far above), layer 1 by 1e-3, layer 2 by 1e-7 (far below).
    const t = [rec(0, 1, [[1, 1e-4, 0], [1, 1e-2, 0], [1, 1, 0]])];
    for (let s = 1; s <= 30; s++) t.push(rec(s, 1, [[1, 1e-4, 0.5], [1, 1e-2, 1e-3], [1, 1, 1e-7]]));
    t[5].layers[0].updateRatio = 0.05; // an early step inside the thresholds
    const b = layerBalance(t);
    expect(b.steps).toHaveLength(30);
    expect(b.steps[0]).toBe(1);
    expect(b.log10Ratio[0]).toHaveLength(3);
    expect(b.log10Ratio[0][0]).toBeCloseTo(Math.log10(0.5), 15);
    expect(b.log10Ratio[0][2]).toBeCloseTo(-7, 12);
    expect(b.depthRatio[0]).toEqual([1e-4, 1e-2, 1]);
    // common practice: band one decade either side of 1e-3; far thresholds two decades.
    expect(b.band).toEqual({ center: 1e-3, low: 1e-4, high: 1e-2, farLow: THRESHOLDS.updateRatioLow.value, farHigh: THRESHOLDS.updateRatioHigh.value });
    expect(b.window).toEqual({ from: 21, to: 30, records: 10 });
    expect(b.recent.map((r) => r.verdict)).toEqual(['high', 'within', 'low']);
    expect(b.recent.map((r) => r.firstOutside)).toEqual([1, null, 1]);
    expect(b.recent[0].medianDepthRatio).toBe(1e-4);
    expect(b.recent[0].earlyDepthRatio).toBe(1e-4);
  });

  it('thins the table to at most maxRows rows, keeping the first and the last', () => {
    const t = Array.from({ length: 1001 }, (_, s) => rec(s, 1, [[1, 1, 1e-3]]));
    const b = layerBalance(t, { maxRows: 100 });
    expect(b.steps.length).toBeLessThanOrEqual(100);
    expect(b.steps[0]).toBe(1);
    expect(b.steps[b.steps.length - 1]).toBe(1000);
  });
});

describe('data checks', () => {
  it('finds duplicates, conflicts, constant columns, scale and class balance by count', () => {
    const x = [[1, 5, 100], [2, 5, 200], [1, 5, 100], [3, 5, 300], [2, 5, 200], [2, 5, 200]];
    const y = [0, 1, 0, 2, 1, 0];
    const data: DataSetup = { rows: 6, inputs: 3, targets: 1, x: Float64Array.from(x.flat()), y: Float64Array.from(y), heldOut: { rows: 2, x: Float64Array.from([1, 5, 100, 9, 9, 9]), y: Float64Array.from([0, 0]) } };
    const d = dataChecks(data, 'cross-entropy', 3);
    // Rows 2 and 4 repeat rows 0 and 1 exactly; row 5 repeats row 1's inputs with another class.
    expect(d.duplicateRows).toBe(2);
    expect(d.duplicateShare).toBeCloseTo(2 / 6, 15);
    expect(d.conflictingRows).toBe(1);
    expect(d.heldOutInTraining).toBe(1);
    expect(d.constantFeatures).toEqual([1]);
    expect(d.features).toHaveLength(3);
    // source: closed form — column 0 is {1, 2, 1, 3, 2, 2}: mean 11/6; column 2 is 100 × column 0, so the spreads differ exactly 100-fold.
    expect(d.features[0].mean).toBeCloseTo(11 / 6, 14);
    const var0 = [1, 2, 1, 3, 2, 2].reduce((s, v) => s + (v - 11 / 6) ** 2, 0) / 6;
    expect(d.features[0].spread).toBeCloseTo(Math.sqrt(var0), 14);
    expect(d.spreadRatio).toBeCloseTo(100, 10);
    expect(d.classes).toEqual({ kind: 'classes', counts: [3, 2, 1], smallestShare: 1 / 6 });
  });

  it('reports the share of 1s per column for binary targets', () => {
    const data: DataSetup = { rows: 4, inputs: 1, targets: 2, x: Float64Array.from([1, 2, 3, 4]), y: Float64Array.from([1, 0, 1, 1, 0, 1, 1, 0]) };
    expect(dataChecks(data, 'binary-cross-entropy', 2).classes).toEqual({ kind: 'binary', positiveShare: [0.75, 0.5] });
  });
});

describe('gradient noise scale', () => {
  it('matches tr(Σ)/|G|² computed by hand for a one-weight linear model', () => {
    // ŷ = w·x + b at w = b = 0 with MSE: per-example gradient 2·r_i·(x_i, 1), r_i = −y_i.
    // x = (1, 2, 3, 4), y = (1, 0, 2, 1): g = (−2, −2), (0, 0), (−12, −4), (−8, −2); G = (−5.5, −2), |G|² = 34.25;
    // Σ|g_i − G|² = 12.25 + 34.25 + 46.25 + 6.25 = 99, tr(Σ) = 99/4 = 24.75.
    // source: closed form by hand of the simple noise scale of McCandlish et al. 2018.
    const model: NetworkModel = { kind: 'network', inputs: 1, layers: [{ units: 1, activation: 'linear' }], init: 'lecun-normal', gain: 1 };
    const net = new Network(model, { rows: 4, inputs: 1, targets: 1, x: Float64Array.from([1, 2, 3, 4]), y: Float64Array.from([1, 0, 2, 1]) }, 'mse', 0);
    const n = gradientNoiseScale(net, new Float64Array(2), Rng.fromSeed(1), { batch: 2 });
    expect(n.sampleRows).toBe(4);
    expect(n.gradientSquared).toBeCloseTo(34.25, 12);
    expect(n.traceCovariance).toBeCloseTo(24.75, 12);
    expect(n.noiseScale).toBeCloseTo(24.75 / 34.25, 12);
    // batch 2 lies within a factor 10 of B ≈ 0.72.
    expect(n.verdict).toBe('near-noise-scale');
  });

  it('a sampled estimate averages to the full-data value over seeded repeats', () => {
    const e = experimentOf(kilnSpec());
    const s = Session.create(e);
    const w = Float64Array.from(s.parameters);
    const exact = gradientNoiseScale(s.objective, w, Rng.fromSeed(0), { sample: 48 });
    expect(exact.sampleRows).toBe(48);
    const base = Rng.fromSeed(77);
    const draws = Array.from({ length: 40 }, (_, i) => gradientNoiseScale(s.objective, w, base.fork(`r${i}`), { sample: 12 }).traceCovariance);
    expect(draws).toHaveLength(40);
    const mean = draws.reduce((a, b) => a + b, 0) / draws.length;
    const sd = Math.sqrt(draws.reduce((a, b) => a + (b - mean) ** 2, 0) / (draws.length - 1));
    // Unbiased estimator (each term's expectation is the population value): the mean of 40 seeded
    // repeats lies within 4 standard errors of the exact value (tolerance from the repeats, not the code).
    expect(Math.abs(mean - exact.traceCovariance)).toBeLessThan((4 * sd) / Math.sqrt(draws.length));
  });
});

describe('generalization', () => {
  it('finds the held-out minimum and the rise since, with the training loss still falling', () => {
    const held = [1, 0.8, 0.6, 0.5, 0.55, 0.6, 0.7];
    const t = held.map((h, s) => rec(s, 1 / (s + 1), [[1, 1, 1e-3]], h));
    const g = generalization(t)!;
    expect(g.steps).toHaveLength(7);
    expect(g.best).toEqual({ step: 3, heldOut: 0.5, train: 0.25 });
    expect(g.riseSinceBest).toBeCloseTo(0.4, 14);
    expect(g.stepsSinceBest).toBe(3);
    expect(g.trainFellSinceBest).toBe(true);
    expect(g.gap[0]).toBe(0);
    expect(generalization([rec(0, 1, [])])).toBeNull();
  });
});
