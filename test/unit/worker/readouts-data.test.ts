/**
 * Readouts read back from a ledger carry core's markings, never the stored ones: a sharpness
 * point's "above the limit", the eigenvalues above the limit line, and the initialization
 * check's "off the rule" are recomputed from the stored numbers (a ledger is untrusted input, and
 * ledgers written before the markings were kept lack them).
 */
import { readoutsFromLedger } from '../../../src/worker/readouts-data';

const health = { rows: 4, step: 0, layers: [{ layer: 0, activation: 'tanh', preMean: 0, preSpread: 1, histogram: { counts: [1, 2, 1] } }] };
const layer = (ratio: number, offRule: boolean) => ({ layer: 0, activation: 'tanh', fanIn: 4, fanOut: 8, weightSpread: ratio / 2, measured: false, ruleSpread: 0.5, rule: 'lecun', ratio, offRule });
const stability = { rule: 'gradient-descent', factor: 2, formula: '2/λmax', preconditioned: false, note: '', sharpness: 25, largestStableLr: 0.08, lr: 0.1, margin: 1.25, sharpnessLimit: 20 };

describe('readouts read from a ledger', () => {
  const r = readoutsFromLedger({
    curvature: {
      step: 3, method: 'dense', parameterCount: 9, top: [25, 19], topBounds: [0, 0], bottom: [-1], bottomBounds: [0], products: 0, stop: 'converged',
      summary: { lambdaMax: 25, caveat: '', stability }, limitLine: 1e9, aboveTop: [false, true], aboveBottom: [true]
    },
    sharpness: [
      { step: 0, lambdaMax: 19, sharpness: 19, limit: 20, preconditioned: false, above: true },
      { step: 5, lambdaMax: 21, sharpness: 21, limit: 20, preconditioned: false, above: false },
      { step: 9, lambdaMax: 21, sharpness: 21, limit: null, preconditioned: false }
    ],
    audit: null, noise: null,
    activations: { start: health },
    init: { rows: 4, chosen: { scheme: 'lecun-normal', gain: 1, chosen: true, layers: [layer(2.5, false)] }, alternatives: [{ scheme: 'he-normal', gain: 1, chosen: false, layers: [layer(1, true), layer(0.3, false)] }] },
    data: null
  });

  it('marks sharpness points above their limit by core\'s rule (strictly above a finite limit)', () => {
    // source: gradient descent grows an eigen-direction with λ > 2/η (Nocedal & Wright 2006, ch. 3); here 2/η = 20.
    expect(r.sharpness).toHaveLength(3);
    expect(r.sharpness.map(p => p.above)).toEqual([false, true, false]);
  });

  it('puts the eigenvalue limit line at factor/η and marks the eigenvalues above it', () => {
    expect(r.curvature?.limitLine).toBe(20);
    expect(r.curvature?.aboveTop).toEqual([true, false]);
    expect(r.curvature?.aboveBottom).toEqual([false]);
  });

  it('marks initialization layers off their fan-in rule beyond 2x either way', () => {
    // common practice (no single source): the check's band is [1/2, 2] times the rule's spread.
    expect(r.init?.chosen.layers.map(l => l.offRule)).toEqual([true]);
    expect(r.init?.alternatives).toHaveLength(1);
    expect(r.init?.alternatives[0].layers.map(l => l.offRule)).toEqual([false, true]);
  });
});
