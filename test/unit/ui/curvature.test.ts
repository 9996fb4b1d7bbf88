/**
 * The curvature readout's path through the engine host and the figure builder.
 */
import { EngineHost } from '../../../src/worker/engine-host';
import { realCore } from '../../../src/worker/core-adapter';
import type { CurvatureResult, EngineReply } from '../../../src/worker/protocol';
import { TEMPLATE_SPEC } from '../../../src/spec';
import { curvatureFigure, stabilityLimit } from '../../../src/ui/curvature-figure';
import type { FigureTheme } from '../../../src/ui/trace-figure';

const theme: FigureTheme = { foreground: '#111', grid: '#ccc', background: '#fff', train: '#00f', heldOut: '#f80', alert: '#f00', font: 'sans' };

async function measure(spec: string, steps: number): Promise<CurvatureResult> {
  const replies: EngineReply[] = [];
  const host = new EngineHost(realCore, r => replies.push(structuredClone(r)));
  await host.receive({ id: 1, kind: 'load', specText: spec, checkpointEvery: 0 });
  if (steps > 0) await host.receive({ id: 2, kind: 'step', n: steps });
  await host.receive({ id: 3, kind: 'curvature', k: 4, denseLimit: 2000 });
  const r = replies[replies.length - 1];
  if (r.kind !== 'curvature') throw new Error(`expected a curvature reply, got ${JSON.stringify(r).slice(0, 200)}`);
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
    expect(stabilityLimit(c)).toBeCloseTo(2 / 5, 12);
    expect(c.summary.stability.margin).toBeCloseTo((5 * c.summary.lambdaMax) / 2, 10);
    const f = curvatureFigure(c, theme);
    const unstable = f.data.find(d => d.name === 'above the stability limit');
    const expectedAbove = [...c.top, ...c.bottom].filter(v => v > 2 / 5).length;
    expect(unstable?.y.length ?? 0).toBe(expectedAbove);
    const line = f.data.find(d => d.name.startsWith('stability limit'));
    expect(line?.y).toEqual([0.4, 0.4]);
  });

  it('draws no limit for an optimizer the rule does not cover', async () => {
    const c = await measure(TEMPLATE_SPEC.replace('optimizer: sgd ', 'optimizer: lbfgs'), 0);
    expect(stabilityLimit(c)).toBeNull();
    expect(curvatureFigure(c, theme).data.map(d => d.name)).toEqual(['eigenvalues']);
  });
});
