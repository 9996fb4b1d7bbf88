/**
 * The curvature readout's early top end (`onTopEnd`): on the matrix-free path λmax and the
 * stability bound are handed out as soon as the largest eigenvalue has converged, while Lanczos
 * goes on for the smallest. The complete readout must not change by it (same operations, so
 * equality: common practice (no single source): identical floating-point operations in one
 * engine give identical results), and the early λmax must agree with the complete one within the
 * two a-posteriori bounds (Golub & Van Loan 4th ed., §10.1.4: |θ − λ| ≤ the residual bound).
 */
import { measureCurvature, measureCurvatureWith, runDensityTrace, type CurvatureReport, type DensityTraceTask } from '../../../src/core/probe/curvature';
import { preconditionerDiagonal, stepMetric } from '../../../src/core/probe/curvature/stability';
import { Network } from '../../../src/core/model/network';
import { Rng } from '../../../src/core/rng';
import type { Recipe } from '../../../src/core/setup';
import { recipe } from './helpers';

function net(): { network: Network; w: Float64Array } {
  const rng = Rng.fromSeed(31);
  const rows = 48;
  const x = rng.fillNormal(new Float64Array(rows * 6));
  const y = Float64Array.from({ length: rows }, () => rng.int(3));
  const model = { kind: 'network' as const, inputs: 6, layers: [{ units: 12, activation: 'tanh' as const }, { units: 3, activation: 'linear' as const }], init: 'lecun-normal' as const, gain: 1 };
  const network = new Network(model, { rows, inputs: 6, targets: 1, x, y }, 'cross-entropy', 0.01);
  return { network, w: rng.fillNormal(new Float64Array(network.parameterCount)) };
}

const options = { denseLimit: 10, k: 4, density: { probes: 2, steps: 10 }, traceProbes: 4 };

function withTopEnd(r: Recipe, extra: object = {}): { full: CurvatureReport; early: CurvatureReport[] } {
  const { network, w } = net();
  const early: CurvatureReport[] = [];
  const full = measureCurvature(network, w, r, Rng.fromSeed(8), { ...options, ...extra, onTopEnd: (p) => early.push(p) });
  return { full, early };
}

describe('the early top end of a matrix-free curvature readout', () => {
  it('comes once, marked partial, with λmax within the bounds of the complete readout', () => {
    const r = recipe({ optimizer: 'sgd', lr: 0.1 });
    const { full, early } = withTopEnd(r);
    expect(early).toHaveLength(1);
    const e = early[0];
    expect(e.partial).toBe(true);
    expect(full.partial).toBeUndefined();
    expect(e.spectrum.method).toBe('lanczos');
    expect(e.spectrum.bottom).toEqual([]);
    expect(e.spectrum.density).toBeNull();
    expect(e.spectrum.trace).toBeNull();
    expect(e.spectrum.top.length).toBeGreaterThanOrEqual(1);
    expect(e.spectrum.top.length).toBeLessThanOrEqual(4);
    // it came before the end: fewer products than the Lanczos run of the complete readout
    expect(e.spectrum.products).toBeLessThan(full.spectrum.products);
    const lam = e.summary.lambdaMax;
    expect(Math.abs(lam - full.summary.lambdaMax)).toBeLessThanOrEqual(e.summary.lambdaMaxBound + full.summary.lambdaMaxBound + 1e-12 * Math.abs(lam));
    // every value it shows has converged to the tolerance
    for (let i = 0; i < e.spectrum.top.length; i++) expect(e.spectrum.topBounds[i]).toBeLessThanOrEqual(1e-10 * Math.abs(lam));
    // the stability bound of the recipe comes with it (plain SGD: 2/η against λmax)
    expect(e.summary.stability.sharpness).toBe(lam);
    expect(e.summary.lambdaMin).toBeNull();
  });

  it('leaves the complete readout unchanged, bit for bit', () => {
    const r = recipe({ optimizer: 'sgd', lr: 0.1 });
    const { network, w } = net();
    const plain = measureCurvature(network, w, r, Rng.fromSeed(8), options);
    const { full } = withTopEnd(r);
    expect(full.spectrum.top).toEqual(plain.spectrum.top);
    expect(full.spectrum.bottom).toEqual(plain.spectrum.bottom);
    expect(full.spectrum.trace).toEqual(plain.spectrum.trace);
    expect(full.summary).toEqual(plain.summary);
  });

  it('gives an adaptive optimizer its preconditioned sharpness early, the very one of the complete readout', () => {
    const r = recipe({ optimizer: 'adam', lr: 0.01 });
    const { network, w } = net();
    // a frozen diagonal preconditioner from a made-up second-moment state
    const v = Float64Array.from({ length: w.length }, (_, i) => 1e-4 * (1 + (i % 7)));
    const precond = preconditionerDiagonal(r, { kind: 'adam', t: 3, buffers: { m: new Float64Array(w.length), v }, scalars: {} });
    const metric = stepMetric(r, network.blocks, precond);
    const plain = measureCurvature(network, w, r, Rng.fromSeed(8), { ...options, metric });
    const { full, early } = withTopEnd(r, { metric });
    expect(early).toHaveLength(1);
    expect(early[0].summary.stability.sharpness).toBe(full.summary.stability.sharpness);
    expect(full.summary).toEqual(plain.summary);
  });

  it('is not sent on the dense path', () => {
    const { network, w } = net();
    const early: CurvatureReport[] = [];
    const r = measureCurvature(network, w, recipe(), Rng.fromSeed(8), { ...options, denseLimit: 1000, onTopEnd: (p) => early.push(p) });
    expect(r.spectrum.method).toBe('dense');
    expect(early).toHaveLength(0);
  });

  it('comes from the two-thread readout as well, before the other thread’s part is awaited', async () => {
    const { network, w } = net();
    const other = net().network;
    const order: string[] = [];
    const run = (task: DensityTraceTask) => {
      order.push('task handed over');
      return { started: Promise.resolve().then(() => void order.push('started')), result: Promise.resolve(runDensityTrace(other, task)), cancel: () => undefined };
    };
    const two = await measureCurvatureWith(run, network, w, recipe({ optimizer: 'sgd', lr: 0.1 }), Rng.fromSeed(8), { ...options, onTopEnd: () => order.push('top end') });
    expect(order).toEqual(['task handed over', 'started', 'top end']);
    expect(two.threads).toBeUndefined();
  });
});

describe('the step metric of an adaptive optimizer on the two-thread readout', () => {
  const r = recipe({ optimizer: 'adam', lr: 0.01 });
  function adaptive(): { network: Network; w: Float64Array; metric: ReturnType<typeof stepMetric> } {
    const { network, w } = net();
    const v = Float64Array.from({ length: w.length }, (_, i) => 1e-4 * (1 + (i % 7)));
    const precond = preconditionerDiagonal(r, { kind: 'adam', t: 3, buffers: { m: new Float64Array(w.length), v }, scalars: {} });
    return { network, w, metric: stepMetric(r, network.blocks, precond) };
  }

  it('is solved by the other thread, first, on the same generator fork: the same numbers as the one-thread readout', async () => {
    const { network, w, metric } = adaptive();
    const other = net().network;
    const tasks: DensityTraceTask[] = [];
    const told: string[] = [];
    const run = (task: DensityTraceTask) => {
      tasks.push(task);
      const result = runDensityTrace(other, task, () => told.push('step metric'));
      return { started: Promise.resolve(), result: Promise.resolve(result), cancel: () => undefined };
    };
    const early: CurvatureReport[] = [];
    const one = measureCurvature(network, w, r, Rng.fromSeed(8), { ...options, metric, onTopEnd: (p) => early.push(p) });
    const earlyTwo: CurvatureReport[] = [];
    const two = await measureCurvatureWith(run, network, w, r, Rng.fromSeed(8), { ...options, metric, pause: () => Promise.resolve(), onTopEnd: (p) => earlyTwo.push(p) });
    expect(tasks).toHaveLength(1);
    expect(tasks[0].stepMetric?.scaling).toBe(metric.scaling);
    expect(tasks[0].stepMetric?.rng).toEqual(Rng.fromSeed(8).fork('step-metric').state());
    expect(told).toEqual(['step metric']);
    // common practice (no single source): identical operations in one engine give identical results.
    expect(two.summary).toEqual(one.summary);
    expect(two.summary.stability.sharpness).not.toBe(two.summary.lambdaMax);
    expect(earlyTwo).toHaveLength(1);
    expect(earlyTwo[0].summary).toEqual(early[0].summary);
  });

  it('holds the top end back until the other thread has sent the step metric, then reports it while Lanczos goes on', async () => {
    const { network, w, metric } = adaptive();
    const other = net().network;
    const order: string[] = [];
    let send: () => void = () => undefined;
    let steps = 0;
    const run = (task: DensityTraceTask) => {
      const result = runDensityTrace(other, task);
      const stepMetric = new Promise<typeof result.stepMetric>((resolve) => (send = () => {
        order.push(`step metric after ${steps} pauses`);
        resolve(result.stepMetric);
      }));
      return { started: Promise.resolve(), result: Promise.resolve(result), stepMetric: stepMetric as Promise<NonNullable<typeof result.stepMetric>>, cancel: () => undefined };
    };
    const pause = (): Promise<void> => {
      steps++;
      if (steps === 30) send();
      return Promise.resolve();
    };
    const two = await measureCurvatureWith(run, network, w, r, Rng.fromSeed(8), { ...options, metric, pause, onTopEnd: (p) => order.push(`top end, sharpness ${p.summary.stability.sharpness}`) });
    order.push('complete');
    const one = measureCurvature(network, w, r, Rng.fromSeed(8), { ...options, metric });
    expect(order).toEqual(['step metric after 30 pauses', `top end, sharpness ${one.summary.stability.sharpness}`, 'complete']);
    expect(two.summary).toEqual(one.summary);
  });
});
