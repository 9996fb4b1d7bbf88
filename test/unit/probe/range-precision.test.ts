/**
 * The learning-rate range test on quadratics whose divergence point is 2/λmax, and the precision
 * readout against rounding computed here from the bits of each double.
 */
import { parseSpec, formatSpecError } from '../../../src/experiment';
import { Session } from '../../../src/core/session/live';
import { Rng } from '../../../src/core/rng';
import { geometricGrid, rangeTest } from '../../../src/core/probe/range-test';
import { rangeTestAt, precisionAt } from '../../../src/core/probe/readouts-at';
import { roundToBits, roundWeights, accuracy } from '../../../src/core/probe/precision';
import { buildObjective } from '../../../src/core/assemble';

function quadratic(diag: number[], start: number[], extra = ''): Session {
  const matrix = diag.map((d, i) => diag.map((_, j) => (i === j ? d : 0)));
  const r = parseSpec(`seed: 1\nmodel: { objective: quadratic, matrix: ${JSON.stringify(matrix)}, start: ${JSON.stringify(start)} }\nrecipe: { optimizer: sgd, lr: 0.01${extra} }\n`);
  if (!r.ok) throw new Error(r.errors.map(formatSpecError).join('\n'));
  return Session.create(r.experiment);
}

describe('learning-rate range test', () => {
  it('along the top eigen-direction the loss follows ½λw₀²·Π(1 − η_jλ)² and turns up at the first η above 2/λmax = 0.5', () => {
    const s = quadratic([4, 1, 0.25], [1, 0, 0]);
    const r = rangeTestAt(s, Rng.fromSeed(1).fork('probe'), { from: 1e-3, to: 2, steps: 30, blowUp: 1e6 });
    const grid = geometricGrid(1e-3, 2, 30);
    expect(r.grid).toEqual(grid);
    expect(r.loss.length).toBe(r.lr.length);
    expect(r.lr.length).toBe(30);
    // source: gradient descent on ½λw² multiplies w by (1 − ηλ) per step (CHECKS.md, Nocedal & Wright 2006, ch. 3)
    let w = 1;
    r.lr.forEach((eta, k) => {
      w *= 1 - eta * 4;
      const expected = 0.5 * 4 * w * w;
      expect(Math.abs(r.loss[k] - expected)).toBeLessThan(1e-12 * Math.max(1, expected));
    });
    const firstAbove = grid.findIndex((eta) => eta > 0.5);
    expect(firstAbove).toBeGreaterThan(0);
    for (let k = 1; k < firstAbove; k++) expect(r.loss[k]).toBeLessThan(r.loss[k - 1]);
    expect(r.loss[firstAbove]).toBeGreaterThan(r.loss[firstAbove - 1]);
    expect(r.suggested?.high).toBe(grid[firstAbove - 1]);
    // low: the first η after which the loss is 1% below its start (closed form as above)
    let ww = 1;
    const lowIdx = grid.findIndex((eta) => { ww *= 1 - eta * 4; return 0.5 * 4 * ww * ww <= 0.99 * 2; });
    expect(r.suggested?.low).toBe(grid[lowIdx]);
    // the recipe's limit at the measured sharpness: 2/λmax for plain SGD
    expect(r.limit?.sharpness).toBeCloseTo(4, 10);
    expect(r.limit?.largestStableLr).toBeCloseTo(0.5, 10);
    expect(r.limit?.formula).toBe('2/λmax');
  });

  it('from a generic start the loss falls at every η below 2/λmax, the run stops once the loss blows up, and the branch is untouched', () => {
    const s = quadratic([4, 1, 0.25], [1, -2, 3]);
    s.step(3);
    const fp = s.fingerprint();
    const r = rangeTest(s.experiment, s.state(), s.objective, { from: 1e-3, to: 10, steps: 40, blowUp: 10 });
    expect(r.startStep).toBe(3);
    expect(r.end).toBe('diverged');
    expect(r.lr.length).toBeLessThan(40);
    expect(r.loss.length).toBe(r.lr.length);
    // source: every factor |1 − ηλ| < 1 while η < 2/λmax, so each step lowers the loss (CHECKS.md)
    const below = r.lr.filter((eta) => eta < 0.5).length;
    expect(below).toBeGreaterThan(5);
    for (let k = 1; k < below; k++) expect(r.loss[k]).toBeLessThan(r.loss[k - 1]);
    expect(r.loss[r.loss.length - 1]).toBeGreaterThan(10 * r.startLoss);
    expect(r.lr[r.lr.length - 1]).toBeGreaterThan(0.5);
    expect(s.fingerprint()).toBe(fp);
  });

  it('can be stopped midway', () => {
    const s = quadratic([4, 1], [1, 1]);
    const r = rangeTest(s.experiment, s.state(), s.objective, { steps: 40, onStep: (done) => done < 7 });
    expect(r.end).toBe('stopped');
    expect(r.lr.length).toBe(7);
  });
});

/** x rounded to k significant bits from its IEEE-754 bits (BigInt arithmetic on the significand), ties to even. */
function roundByBits(x: number, k: number): number {
  if (x === 0 || !Number.isFinite(x)) return x;
  const view = new DataView(new ArrayBuffer(8));
  view.setFloat64(0, x);
  const bits = view.getBigUint64(0);
  const sign = bits >> 63n;
  const exp = (bits >> 52n) & 0x7ffn;
  let mant = bits & ((1n << 52n) - 1n);
  if (exp !== 0n) mant |= 1n << 52n; // implicit bit
  // significant bits present: 53 for normals, fewer for subnormals
  const present = exp !== 0n ? 53 : mant.toString(2).length;
  const drop = BigInt(Math.max(0, present - k));
  if (drop === 0n) return x;
  const unit = 1n << drop;
  const rem = mant & (unit - 1n);
  let kept = mant >> drop;
  const half = unit >> 1n;
  if (rem > half || (rem === half && (kept & 1n) === 1n)) kept += 1n;
  const value = Number(kept) * 2 ** (Number(drop) + (exp === 0n ? -1074 : Number(exp) - 1075));
  return sign ? -value : value;
}

describe('precision tolerance', () => {
  it.each([16, 10, 8, 6, 4, 1, 24])('rounds to %i significant bits exactly as the bit-level rounding does (ties to even, subnormals)', (k) => {
    const rng = Rng.fromSeed(k);
    const xs: number[] = [];
    for (let i = 0; i < 2000; i++) xs.push(rng.normal() * Math.exp(6 * rng.normal()));
    // exact ties at k bits: 1 + 2^-k (ties to 1), 1 + 3·2^-k (ties up), and negative, tiny and huge values
    xs.push(1 + 2 ** -k, 1 + 3 * 2 ** -k, -(1 + 2 ** -k), 5e-324, 3e-310, -2.2250738585072014e-308, 1.7976931348623157e308, 0.1, -0.3);
    expect(xs.length).toBe(2009);
    // source: IEEE 754-2019 §4.3.1 roundTiesToEven, applied here to the significand's bits
    for (const x of xs) expect(Object.is(roundToBits(x, k), roundByBits(x, k))).toBe(true);
  });

  it('the readout evaluates the loss and accuracy at the directly rounded weights', () => {
    const r = parseSpec(`seed: 4
model: { inputs: 2, layers: [{ units: 6, activation: tanh }, { units: 3 }] }
loss: cross-entropy
data:
  x: [[0.1, 0.9], [0.8, 0.2], [0.5, 0.5], [0.9, 0.9], [0.2, 0.1], [0.7, 0.4], [0.3, 0.8], [0.6, 0.1]]
  y: [0, 1, 2, 2, 0, 1, 0, 1]
recipe: { optimizer: adam, lr: 0.05 }
`);
    if (!r.ok) throw new Error(r.errors.map(formatSpecError).join('\n'));
    const s = Session.create(r.experiment);
    s.step(30);
    const p = precisionAt(s);
    expect(p.rows.map((x) => x.bits)).toEqual([53, 16, 10, 8, 6, 4]);
    const objective = buildObjective(r.experiment.setup);
    expect(p.rows.length).toBe(6);
    for (const row of p.rows) {
      const v = Float64Array.from(s.parameters, (x) => roundByBits(x, row.bits));
      expect(Object.is(row.loss, objective.value(v))).toBe(true);
      const net = objective as unknown as { predict(w: Float64Array): Float64Array };
      expect(row.accuracy).toBe(accuracy(net.predict(v), r.experiment.setup.data!.y, 3, 'cross-entropy'));
    }
    expect(p.rows[0].lossChange).toBe(0);
    expect(p.rows[0].maxRelativeChange).toBe(0);
    // source: rounding to k bits moves a value by at most 2^-k relative (half a unit in the last kept place)
    p.rows.slice(1).forEach((row) => expect(row.maxRelativeChange).toBeLessThanOrEqual(2 ** -row.bits));
    expect(Array.from(roundWeights(Float64Array.of(0.1), 4))).toEqual([0.1015625]);
  });

  it('accuracy counts arg-max classes and logit signs', () => {
    expect(accuracy(Float64Array.of(1, 2, 0, 5, 4, 3), Float64Array.of(1, 1), 3, 'cross-entropy')).toBe(0.5);
    expect(accuracy(Float64Array.of(0.3, -1, 2), Float64Array.of(1, 0, 0), 1, 'binary-cross-entropy')).toBeCloseTo(2 / 3, 15);
    expect(accuracy(Float64Array.of(1), Float64Array.of(1), 1, 'mse')).toBeUndefined();
  });
});
