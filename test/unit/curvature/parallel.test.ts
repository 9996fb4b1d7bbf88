/**
 * The curvature readout with its density and trace run elsewhere (`measureCurvatureWith`, the
 * engine worker's helper thread) gives the numbers of the one-thread readout: the same code on
 * the same generator forks, so the check is equality (common practice (no single source):
 * identical floating-point operations in one engine give identical results).
 */
import { measureCurvature, measureCurvatureWith, runDensityTrace, type DensityTraceTask } from '../../../src/core/probe/curvature';
import { Network } from '../../../src/core/model/network';
import { Rng } from '../../../src/core/rng';
import { recipe } from './helpers';

function net(act: 'tanh' | 'relu' = 'tanh'): { network: Network; w: Float64Array } {
  const rng = Rng.fromSeed(12);
  const rows = 40;
  const x = rng.fillNormal(new Float64Array(rows * 5));
  const y = Float64Array.from({ length: rows }, () => rng.int(3));
  const model = { kind: 'network' as const, inputs: 5, layers: [{ units: 9, activation: act }, { units: 3, activation: 'linear' as const }], init: 'lecun-normal' as const, gain: 1 };
  const network = new Network(model, { rows, inputs: 5, targets: 1, x, y }, 'cross-entropy', 0.01);
  return { network, w: rng.fillNormal(new Float64Array(network.parameterCount)) };
}

describe('measureCurvatureWith', () => {
  it('gives the one-thread readout’s numbers, with the density and trace computed on another objective copy', async () => {
    const { network, w } = net();
    const other = net().network; // the helper's own copy of the objective
    const tasks: DensityTraceTask[] = [];
    const run = (task: DensityTraceTask) => {
      tasks.push(task);
      return { started: Promise.resolve(), result: Promise.resolve(runDensityTrace(other, task)), cancel: () => undefined };
    };
    const options = { denseLimit: 10, k: 3, density: { probes: 3, steps: 12 }, traceProbes: 8 };
    const one = measureCurvature(network, w, recipe({ optimizer: 'sgd', lr: 0.1 }), Rng.fromSeed(4), options);
    const two = await measureCurvatureWith(run, network, w, recipe({ optimizer: 'sgd', lr: 0.1 }), Rng.fromSeed(4), options);
    expect(tasks).toHaveLength(1);
    expect(one.spectrum.method).toBe('lanczos');
    expect(two.spectrum.top).toEqual(one.spectrum.top);
    expect(two.spectrum.bottom).toEqual(one.spectrum.bottom);
    expect(two.spectrum.trace).toEqual(one.spectrum.trace);
    expect(two.spectrum.negativeShare).toEqual(one.spectrum.negativeShare);
    expect(Array.from(two.spectrum.density?.density ?? [])).toEqual(Array.from(one.spectrum.density?.density ?? []));
    expect(two.spectrum.products).toBe(one.spectrum.products);
    expect(two.summary).toEqual(one.summary);
  });

  it('gives the same exact trace of a piecewise-linear network from the other thread', async () => {
    const { network, w } = net('relu');
    const other = net('relu').network;
    const run = (task: DensityTraceTask) => ({ started: Promise.resolve(), result: Promise.resolve(runDensityTrace(other, task)), cancel: () => undefined });
    const options = { denseLimit: 10, k: 3, density: { probes: 3, steps: 12 }, traceProbes: 8 };
    const one = measureCurvature(network, w, recipe({ optimizer: 'sgd', lr: 0.1 }), Rng.fromSeed(4), options);
    const two = await measureCurvatureWith(run, network, w, recipe({ optimizer: 'sgd', lr: 0.1 }), Rng.fromSeed(4), options);
    expect(one.spectrum.trace?.method).toBe('exact');
    expect(two.spectrum.trace).toEqual(one.spectrum.trace);
    expect(two.summary).toEqual(one.summary);
  });

  it('gives the event loop a turn between Lanczos steps; a stop then cancels the other thread and returns without its result', async () => {
    const { network, w } = net();
    let cancelled = 0;
    let stop = false;
    let turns = 0;
    // The other thread never answers: a readout that waited for it would never return.
    const run = () => ({ started: Promise.resolve(), result: new Promise<never>(() => undefined), cancel: () => void cancelled++ });
    const pause = (): Promise<void> => {
      turns++;
      // A stop request arrives as a message while the event loop has its turn.
      return new Promise((resolve) => setTimeout(() => {
        if (turns === 4) stop = true;
        resolve();
      }, 0));
    };
    const options = { denseLimit: 10, k: 3, density: { probes: 3, steps: 12 }, traceProbes: 8, shouldStop: () => stop, pause };
    const r = await measureCurvatureWith(run, network, w, recipe({ optimizer: 'sgd', lr: 0.1 }), Rng.fromSeed(4), options);
    expect(turns).toBe(4);
    expect(cancelled).toBe(1);
    expect(r.spectrum.stop).toBe('cancelled');
    expect(r.spectrum.density).toBeNull();
    expect(r.spectrum.trace).toBeNull();
    // Four steps were taken: the values so far, with their (wide) bounds.
    expect(r.spectrum.top.length).toBeGreaterThan(0);
  });

  it('runs nothing elsewhere on the dense path', async () => {
    const { network, w } = net();
    let calls = 0;
    const r = await measureCurvatureWith(() => { calls++; throw new Error('not expected'); }, network, w, recipe(), Rng.fromSeed(1), { denseLimit: 1000 });
    expect(calls).toBe(0);
    expect(r.spectrum.method).toBe('dense');
  });
});
