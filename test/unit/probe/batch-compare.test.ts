/**
 * Batch-size comparison at equal examples seen, on a linear least-squares model where gradient
 * descent has a closed form computed here: w ← w − η·(2/m)·Σ (w·x + b − y)·(x, 1) over the m rows of
 * a batch (source: the gradient of PyTorch's MSELoss mean (ŷ − y)², differentiated directly).
 */
import { parseSpec, formatSpecError } from '../../../src/experiment';
import { Session } from '../../../src/core/session/live';
import { Rng } from '../../../src/core/rng';
import { compareBatchSizes } from '../../../src/core/probe/batch-compare';
import { gradientNoiseScale } from '../../../src/core/probe/noise-scale';
import { adaptSessionState } from '../../../src/core/session/adapt';

function linearSpec(x: number[][], y: number[], lr: number): string {
  return `seed: 6
model: { inputs: 2, layers: [{ units: 1 }], weights: [{ weight: [[0.2, -0.1]], bias: [0.05] }] }
data: { x: ${JSON.stringify(x)}, y: ${JSON.stringify(y)} }
recipe: { optimizer: sgd, lr: ${lr} }
`;
}

function session(text: string): Session {
  const r = parseSpec(text);
  if (!r.ok) throw new Error(r.errors.map(formatSpecError).join('\n'));
  return Session.create(r.experiment);
}

/** Full-batch gradient descent on mean (w·x + b − y)², k steps from (w, b); the loss after each step. */
function gdLosses(x: number[][], y: number[], lr: number, steps: number): number[] {
  let w = [0.2, -0.1];
  let b = 0.05;
  const loss = (): number => x.reduce((s, r, i) => s + (w[0] * r[0] + w[1] * r[1] + b - y[i]) ** 2, 0) / x.length;
  const out = [loss()];
  for (let k = 0; k < steps; k++) {
    const gw = [0, 0];
    let gb = 0;
    x.forEach((r, i) => {
      const e = (2 / x.length) * (w[0] * r[0] + w[1] * r[1] + b - y[i]);
      gw[0] += e * r[0]; gw[1] += e * r[1]; gb += e;
    });
    w = [w[0] - lr * gw[0], w[1] - lr * gw[1]];
    b -= lr * gb;
    out.push(loss());
  }
  return out;
}

describe('batch-size comparison', () => {
  it('on eight copies of one row every batch sees the full gradient, so at equal examples the smallest batch has taken the most steps and ends lowest', () => {
    const x = Array.from({ length: 8 }, () => [0.5, -1]);
    const y = Array.from({ length: 8 }, () => 0.3);
    const s = session(linearSpec(x, y, 0.05));
    const r = compareBatchSizes(s.experiment, s.state(), s.objective, [1, 4, 0], 16, Rng.fromSeed(1))!;
    expect(r.runs.length).toBe(3);
    expect(r.runs.map((run) => run.updates)).toEqual([16, 4, 2]);
    expect(r.runs.map((run) => run.examples[run.examples.length - 1])).toEqual([16, 16, 16]);
    for (const run of r.runs) {
      const expected = gdLosses(x, y, 0.05, run.updates);
      expect(run.loss.length).toBe(expected.length);
      run.loss.forEach((l, k) => expect(Math.abs(l - expected[k])).toBeLessThan(1e-12 * Math.max(1e-3, expected[k])));
    }
    expect(r.best).toBe(1);
    expect(r.runs.map((run) => run.verdict)).toEqual(['reference', 'worse', 'worse']);
    // source: McCandlish et al. 2018: identical per-example gradients have tr(Σ) = 0, so B_noise = 0 and every batch is above it
    expect(r.noiseScale.traceCovariance).toBeLessThan(1e-25);
    expect(r.runs.map((run) => run.noise)).toEqual(['above-noise-scale', 'above-noise-scale', 'above-noise-scale']);
  });

  it('the full-batch run follows gradient descent, the mini-batch run the session with that batch, and the noise scale is the diagnosis one', () => {
    const rng = Rng.fromSeed(12);
    const x = Array.from({ length: 12 }, () => [Math.round(100 * rng.normal()) / 100, Math.round(100 * rng.normal()) / 100]);
    const y = x.map((r) => Math.round(100 * (0.7 * r[0] - 0.4 * r[1] + 0.3 * rng.normal())) / 100);
    const s = session(linearSpec(x, y, 0.1));
    s.step(2);
    const r = compareBatchSizes(s.experiment, s.state(), s.objective, [0, 3], 36, Rng.fromSeed(2))!;
    expect(r.startStep).toBe(2);
    expect(r.runs.length).toBe(2);
    const full = r.runs[0];
    expect(full.full).toBe(true);
    expect(full.examples).toEqual([0, 12, 24, 36]);
    const expected = gdLosses(x, y, 0.1, 5).slice(2);
    full.loss.forEach((l, k) => expect(Math.abs(l - expected[k])).toBeLessThan(1e-12));
    const mini = r.runs[1];
    expect(mini.examples).toEqual([0, 3, 6, 9, 12, 15, 18, 21, 24, 27, 30, 33, 36]);
    const recipe = { ...s.experiment.recipe, batch: 3 };
    const branch = Session.restore({ ...s.experiment, recipe }, adaptSessionState(s.state(), recipe, s.objective));
    const recs = branch.step(12);
    expect(recs.length).toBe(12);
    recs.forEach((rec, k) => expect(Object.is(rec.loss, mini.loss[k + 1])).toBe(true));
    const noise = gradientNoiseScale(s.objective, s.parameters, Rng.fromSeed(2).fork('noise'), { step: 2 });
    expect(r.noiseScale).toEqual(noise);
  });

  it('can be stopped, and refuses a single size or an oversized budget', () => {
    const x = [[1, 0], [0, 1], [1, 1]];
    const s = session(linearSpec(x, [1, 2, 3], 0.1));
    expect(compareBatchSizes(s.experiment, s.state(), s.objective, [1, 0], 30, Rng.fromSeed(1), { onUpdate: (_r, k) => k < 5 })).toBeNull();
    expect(() => compareBatchSizes(s.experiment, s.state(), s.objective, [1], 30, Rng.fromSeed(1))).toThrow(/at least two batch sizes/);
    expect(() => compareBatchSizes(s.experiment, s.state(), s.objective, [1, 2], 1e6, Rng.fromSeed(1))).toThrow(/above the limit of 200000/);
  });
});
