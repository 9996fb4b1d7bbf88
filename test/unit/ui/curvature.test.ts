/**
 * The curvature readout's path through the engine host and the figure builder.
 */
import { EngineHost } from '../../../src/worker/engine-host';
import { coreWith, realCore } from '../../../src/worker/core-adapter';
import { buildObjective } from '../../../src/core/assemble';
import { runDensityTrace, type DensityTraceJob, type DensityTraceTask } from '../../../src/core/probe/curvature';
import type { Experiment } from '../../../src/core/setup';
import type { CurvatureResult, EngineReply } from '../../../src/worker/protocol';
import { TEMPLATE_SPEC } from '../../../src/experiment';
import { curvatureFigure, sharpnessFigure } from '../../../src/ui/curvature-figure';
import { mergeSharpness } from '../../../src/ui/view-state';
import type { FigureTheme } from '../../../src/figures/trace';

const theme: FigureTheme = { foreground: '#111', grid: '#ccc', background: '#fff', train: '#00f', heldOut: '#f80', alert: '#f00', font: 'sans', series: ['#00f', '#f80', '#0a0'] };

async function measure(spec: string, steps: number): Promise<CurvatureResult> {
  const replies: EngineReply[] = [];
  const host = new EngineHost(realCore, r => replies.push(structuredClone(r)));
  await host.receive({ id: 1, kind: 'load', specText: spec, checkpointEvery: 0 });
  if (steps > 0) await host.receive({ id: 2, kind: 'step', n: steps });
  await host.receive({ id: 3, kind: 'curvature', k: 4, denseLimit: 2000 });
  const r = replies[replies.length - 1];
  if (r.kind !== 'curvature' || r.result === null) throw new Error(`expected a curvature reply, got ${JSON.stringify(r).slice(0, 200)}`);
  return r.result;
}

describe('curvature readout', () => {
  it('measures the full spectrum ends of a small network at the current step', async () => {
    const c = await measure(TEMPLATE_SPEC, 3);
    expect(c.step).toBe(3);
    expect(c.method).toBe('dense');
    expect(c.parameterCount).toBe(26);
    expect(c.top).toHaveLength(4);
    expect(c.bottom).toHaveLength(4);
    expect(c.summary.lambdaMax).toBe(c.top[0]);
    for (let i = 1; i < c.top.length; i++) expect(c.top[i]).toBeLessThanOrEqual(c.top[i - 1]);
  });

  it('puts the plain gradient-descent limit at 2/η and flags eigenvalues above it', async () => {
    const c = await measure(TEMPLATE_SPEC.replace('lr: 0.1 ', 'lr: 5   '), 0);
    // common practice (Nocedal & Wright 2006, ch. 3): gradient descent on a quadratic is stable iff η < 2/λmax.
    expect(c.limitLine).toBeCloseTo(2 / 5, 12);
    expect(c.aboveTop).toEqual(c.top.map(v => v > 2 / 5));
    expect(c.aboveBottom).toEqual(c.bottom.map(v => v > 2 / 5));
    expect(c.summary.stability.margin).toBeCloseTo((5 * c.summary.lambdaMax) / 2, 10);
    const f = curvatureFigure(c, theme);
    const unstable = f.data.find(d => d.name === 'above the stability limit');
    const expectedAbove = [...c.top, ...c.bottom].filter(v => v > 2 / 5).length;
    expect(unstable?.y.length ?? 0).toBe(expectedAbove);
    const line = f.data.find(d => d.name.startsWith('stability limit'));
    expect(line?.y).toEqual([0.4, 0.4]);
    // The dashed line is at λ = 2/η (its legend says so), not at the largest stable η 2/λmax.
    expect(line?.name).toBe('stability limit λ = 2/η');
  });

  it('draws no limit for an optimizer the rule does not cover', async () => {
    const c = await measure(TEMPLATE_SPEC.replace('optimizer: sgd ', 'optimizer: lbfgs'), 0);
    expect(c.limitLine).toBeNull();
    expect([...c.aboveTop, ...c.aboveBottom].every(a => !a)).toBe(true);
    expect(curvatureFigure(c, theme).data.map(d => d.name)).toEqual(['eigenvalues']);
  });
});

describe('sharpness trace', () => {
  it('measures the sharpness at the start and every k steps while stepping', async () => {
    const replies: EngineReply[] = [];
    const host = new EngineHost(realCore, r => replies.push(structuredClone(r)), { chunkMs: 0 });
    await host.receive({ id: 1, kind: 'load', specText: TEMPLATE_SPEC, checkpointEvery: 0 });
    await host.receive({ id: 2, kind: 'step', n: 20, sharpnessEvery: 5 });
    const points = replies.flatMap(r => (r.kind === 'progress' || r.kind === 'stepped' ? r.sharpness ?? [] : []));
    expect(points.map(p => p.step)).toEqual([0, 5, 10, 15, 20]);
    // common practice (Nocedal & Wright 2006, ch. 3): plain gradient descent's limit is 2/η.
    for (const p of points) expect(p.limit).toBeCloseTo(2 / 0.1, 12);
    await host.receive({ id: 3, kind: 'curvature', k: 1, denseLimit: 2000 });
    const dense = replies[replies.length - 1];
    if (dense.kind !== 'curvature' || dense.result === null) throw new Error('expected a curvature reply');
    // The short Lanczos run and the full Hessian agree on λmax at step 20 (Golub & Van Loan, ch. 10: extreme eigenvalues converge first).
    expect(points[4].lambdaMax).toBeCloseTo(dense.result.top[0], 6);
  });

  it('merges new points by step and marks crossings of the limit', () => {
    // The marking is core's (`above`, decided by aboveLimit); the figure draws the points so marked.
    const pt = (step: number, sharpness: number) => ({ step, lambdaMax: sharpness, sharpness, limit: 2, preconditioned: false, above: sharpness > 2 });
    const merged = mergeSharpness([pt(0, 1), pt(5, 1.5)], [pt(5, 1.6), pt(10, 2.5)]);
    expect(merged.map(p => [p.step, p.sharpness])).toEqual([[0, 1], [5, 1.6], [10, 2.5]]);
    expect(mergeSharpness(merged, undefined)).toBe(merged);
    const f = sharpnessFigure(merged, theme);
    expect(f.data.map(d => d.name)).toEqual(['λmax', 'stability limit', 'above the limit']);
    expect(f.data[2].x).toEqual([10]);
    expect(f.layout.yaxis.type).toBe('linear');
    expect(sharpnessFigure([pt(0, 1), pt(1, 1e6)], theme).layout.yaxis.type).toBe('log');
  });
});

describe('curvature readout on the matrix-free path', () => {
  it('sends the top end as progress (partial) before the complete readout, which is not partial', async () => {
    const replies: EngineReply[] = [];
    const host = new EngineHost(realCore, r => replies.push(structuredClone(r)));
    await host.receive({ id: 1, kind: 'load', specText: TEMPLATE_SPEC, checkpointEvery: 0 });
    await host.receive({ id: 2, kind: 'step', n: 2 });
    replies.length = 0;
    // P = 26 above a dense limit of 10: Lanczos at both ends
    await host.receive({ id: 3, kind: 'curvature', k: 3, denseLimit: 10 });
    const early = replies.filter(r => r.kind === 'progress' && r.curvature !== undefined);
    expect(early).toHaveLength(1);
    const last = replies[replies.length - 1];
    if (last.kind !== 'curvature' || last.result === null || early[0].kind !== 'progress' || early[0].curvature === undefined) throw new Error('expected a partial top end, then the readout');
    const top = early[0].curvature;
    expect(replies.indexOf(early[0])).toBeLessThan(replies.length - 1);
    expect(top.partial).toBe(true);
    expect(top.method).toBe('lanczos');
    expect(top.step).toBe(2);
    expect(top.bottom).toEqual([]);
    expect(last.result.partial).toBeUndefined();
    expect(last.result.method).toBe('lanczos');
    // source: Golub & Van Loan 4th ed., §10.1.4 — each Ritz value lies within its residual bound of an eigenvalue.
    expect(Math.abs(top.summary.lambdaMax - last.result.summary.lambdaMax)).toBeLessThanOrEqual(top.summary.lambdaMaxBound + last.result.summary.lambdaMaxBound + 1e-12);
    // the readout kept for the branch is the complete one
    expect(last.readouts.curvature?.partial).toBeUndefined();
  });

  it('stops between Lanczos steps: the partial readout is discarded, the branch keeps its previous one and the helper gives its task up', async () => {
    // A network of our own (4-32-32-1 tanh, P 1 249, 64 seeded rows) whose two-ended run takes
    // dozens of steps, with the density and trace on a stand-in helper thread.
    const x = Array.from({ length: 64 }, (_, r) => Array.from({ length: 4 }, (_, c) => Math.sin(1.7 * r + 0.9 * c)));
    const spec = JSON.stringify({
      seed: 4,
      model: { inputs: 4, layers: [{ units: 32, activation: 'tanh' }, { units: 32, activation: 'tanh' }, { units: 1, activation: 'linear' }] },
      data: { x, y: x.map((row) => row[0] * row[1] - row[2]) },
      loss: 'mse',
      recipe: { optimizer: 'sgd', lr: 0.05 },
    });
    let cancelled = 0;
    const helper = (experiment: Experiment) => (task: DensityTraceTask): DensityTraceJob => ({
      started: Promise.resolve(),
      result: Promise.resolve(runDensityTrace(buildObjective(experiment.setup), task)),
      cancel: () => void cancelled++,
    });
    const replies: EngineReply[] = [];
    const host = new EngineHost(coreWith(helper), r => replies.push(structuredClone(r)), { chunkMs: 0 });
    await host.receive({ id: 1, kind: 'load', specText: `# stepwell\n${spec}\n`, checkpointEvery: 0 });
    await host.receive({ id: 2, kind: 'curvature', k: 5, denseLimit: 10 });
    const first = replies[replies.length - 1];
    if (first.kind !== 'curvature' || first.result === null) throw new Error(`expected a complete readout, got ${JSON.stringify(first).slice(0, 200)}`);
    expect(first.stopped).toBe(false);
    expect(first.result.products).toBeGreaterThan(40);
    await host.receive({ id: 3, kind: 'step', n: 2 });
    replies.length = 0;
    const running = host.receive({ id: 4, kind: 'curvature', k: 5, denseLimit: 10 });
    // Stop as soon as the top end is out: the bottom end still needs steps.
    while (!replies.some((r) => r.id === 4 && r.kind === 'progress')) await new Promise((resolve) => setTimeout(resolve, 0));
    await host.receive({ id: 5, kind: 'stop', target: 4 });
    await running;
    const last = replies[replies.length - 1];
    if (last.kind !== 'curvature') throw new Error(`expected the curvature reply, got ${last.kind}`);
    expect(last.stopped).toBe(true);
    expect(last.result).toBeNull();
    expect(last.readouts.curvature?.step).toBe(0);
    expect(cancelled).toBe(1);
  });
});
