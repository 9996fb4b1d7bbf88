/**
 * The long readouts as resumable tasks: run in slices of one unit (as the engine worker runs them
 * between progress replies) they give exactly the one-call result; Stop ends them with what was
 * measured (range test) or nothing (plane, batch comparison).
 */
import { parseSpec, formatSpecError } from '../../../src/experiment';
import { Session } from '../../../src/core/session/live';
import { Rng } from '../../../src/core/rng';
import { rangeTest, rangeTestTask } from '../../../src/core/probe/range-test';
import { planeReadout, planeTask, planeDirections } from '../../../src/core/probe/slice';
import { batchCompareTask, compareBatchSizes } from '../../../src/core/probe/batch-compare';
import type { UnitTask } from '../../../src/core/probe/unit-task';
import { deeperTask, lineAt, planeAt, precisionAt, rangeTestAt } from '../../../src/core/probe/readouts-at';

const r = parseSpec(`seed: 8
model: { inputs: 2, layers: [{ units: 4, activation: { expr: "x / (1 + abs(x))" } }, { units: 1 }] }
data: { x: [[0.1, 0.9], [0.8, 0.2], [0.5, 0.5], [0.9, 0.9], [0.2, 0.1], [0.7, 0.4]], y: [0.3, 0.1, 0.4, 0.9, 0.0, 0.2] }
recipe: { optimizer: sgd, lr: 0.1, momentum: 0.5 }
`);
if (!r.ok) throw new Error(r.errors.map(formatSpecError).join('\n'));
const s = Session.create(r.experiment);
s.step(4);

/** Runs a task one unit per call; returns the calls made and the progress seen. */
function sliced<T>(task: UnitTask<T>): { calls: number; progress: number[] } {
  const progress: number[] = [];
  let calls = 0;
  while (!task.run({ shouldStop: () => true, onProgress: (d) => progress.push(d) })) calls++;
  return { calls: calls + 1, progress };
}

describe('readouts as resumable tasks', () => {
  it('the range test in slices of one update equals the one-call run, and Stop keeps what was measured', () => {
    const whole = rangeTest(s.experiment, s.state(), s.objective, { steps: 15 });
    const task = rangeTestTask(s.experiment, s.state(), s.objective, { steps: 15 });
    const { calls, progress } = sliced(task);
    expect(calls).toBe(whole.lr.length);
    expect(progress).toEqual(Array.from({ length: whole.lr.length }, (_, i) => i + 1));
    expect(task.result()).toEqual(whole);
    const stopped = rangeTestTask(s.experiment, s.state(), s.objective, { steps: 15 });
    stopped.run({ shouldStop: () => stopped.done >= 4 });
    const partial = stopped.stop();
    expect(partial.end).toBe('stopped');
    expect(partial.loss).toEqual(whole.loss.slice(0, 4));
  });

  it('the plane in slices of one row equals the one-call grid; a stopped plane has no result', () => {
    const d = planeDirections(s.objective, s.parameters, 'random', Rng.fromSeed(1));
    const path = { steps: [4], weights: [Float64Array.from(s.parameters)] };
    const whole = planeReadout(s.objective, s.parameters, 4, 'random', d, path, { points: 7 });
    const task = planeTask(s.objective, s.parameters, 4, 'random', d, path, { points: 7 });
    expect(sliced(task).calls).toBe(7);
    expect(task.result()).toEqual(whole);
    const stopped = planeTask(s.objective, s.parameters, 4, 'random', d, path, { points: 7 });
    stopped.run({ shouldStop: () => true });
    expect(stopped.stop()).toBeNull();
  });

  it('the batch comparison in slices of one update equals the one-call comparison', () => {
    const whole = compareBatchSizes(s.experiment, s.state(), s.objective, [2, 0], 12, Rng.fromSeed(3));
    const task = batchCompareTask(s.experiment, s.state(), s.objective, [2, 0], 12, Rng.fromSeed(3));
    expect(task.total).toBe(6 + 2);
    expect(sliced(task).calls).toBe(8);
    expect(task.result()).toEqual(whole);
  });

  it('deeperTask gives each readout as the session-level call with the <what>-<step> generator, as plain data', () => {
    const fork = (what: string): Rng => Rng.fromSeed(8).fork(`${what}-4`);
    const path = { steps: [4], weights: [Float64Array.from(s.parameters)] };
    const cases = [
      [{ what: 'line' as const }, () => lineAt(s, fork('line'))],
      [{ what: 'plane' as const, directions: 'random' as const, points: 5 }, () => planeAt(s, 'random', fork('plane'), path, { points: 5 })],
      [{ what: 'range' as const, steps: 8 }, () => rangeTestAt(s, fork('range'), { steps: 8 })],
      [{ what: 'precision' as const }, () => precisionAt(s)],
      [{ what: 'batch' as const, sizes: [3, 0], examples: 12 }, () => compareBatchSizes(s.experiment, s.state(), s.objective, [3, 0], 12, fork('batch'))],
    ] as const;
    expect(cases.length).toBe(5);
    for (const [request, direct] of cases) {
      const task = deeperTask(s, request, path);
      while (!task.run({ shouldStop: () => true })) { /* one unit per call */ }
      const got = task.result();
      expect(got?.what).toBe(request.what);
      expect(got?.step).toBe(4);
      expect(got?.result).toEqual(direct());
      expect(JSON.parse(JSON.stringify(got))).toEqual(got);
    }
    const stopped = deeperTask(s, { what: 'plane', directions: 'random', points: 9 }, path);
    stopped.run({ shouldStop: () => true });
    expect(stopped.stop()).toBeNull();
  });
});
