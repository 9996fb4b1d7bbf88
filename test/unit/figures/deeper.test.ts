/**
 * Level lines by marching squares against closed forms, and the deeper readouts' figures: what is
 * drawn where (the step taken, Brent's minimum, the stability limit, one level line per level).
 */
import { contourLevels, levelLines } from '../../../src/figures/contour';
import { batchFigure, blend, lineFigure, planeFigure, rangeFigure } from '../../../src/figures/deeper';
import { IMAGE_THEME } from '../../../src/figures/trace';
import { lineReadout } from '../../../src/core/probe/line';
import { planeReadout } from '../../../src/core/probe/slice';
import { Quadratic } from '../../../src/core/model/analytic';
import type { RangeTestAtResult } from '../../../src/core/probe/readouts-at';

const axis = (n: number, lo: number, hi: number): number[] => Array.from({ length: n }, (_, i) => lo + ((hi - lo) * i) / (n - 1));

describe('level lines', () => {
  it('of a plane 2x + 3y lie exactly on 2x + 3y = c (linear interpolation is exact for a linear function)', () => {
    const xs = axis(11, -1, 1);
    const ys = axis(9, -1, 1);
    const z = ys.map((y) => xs.map((x) => 2 * x + 3 * y));
    const lines = levelLines(xs, ys, z, [-2, 0.5, 3.7]);
    expect(lines.length).toBe(3);
    for (const l of lines) {
      expect(l.segments).toBeGreaterThan(3);
      let points = 0;
      l.x.forEach((x, k) => { const y = l.y[k]; if (y !== null) { expect(Math.abs(2 * x + 3 * y - l.level)).toBeLessThan(1e-12); points++; } });
      expect(points).toBe(2 * l.segments);
    }
  });

  it('of x² + y² stay within the grid\'s interpolation error of the circle √c', () => {
    const xs = axis(41, -2, 2);
    const z = xs.map((y) => xs.map((x) => x * x + y * y));
    const [l] = levelLines(xs, xs, z, [1]);
    expect(l.segments).toBeGreaterThan(30);
    // source: linear interpolation of x² over a cell of width h errs by at most h²/4 in value; here h = 0.1
    l.x.forEach((x, k) => { const y = l.y[k]; if (y !== null) expect(Math.abs(Math.hypot(x, y) - 1)).toBeLessThan(0.01); });
  });

  it('resolves a saddle cell by the mean of its corners, and spaces levels geometrically over a loss spanning decades', () => {
    const [l] = levelLines([0, 1], [0, 1], [[1, 0], [0, 1]], [0.4]);
    expect(l.segments).toBe(2);
    const lv = contourLevels([[0.01, 0.1], [1, 10]], 3);
    expect(lv.length).toBe(3);
    expect(lv[1] / lv[0]).toBeCloseTo(lv[2] / lv[1], 12);
    expect(contourLevels([[1, 2], [3, 4]], 3)).toEqual([1.75, 2.5, 3.25]);
  });
});

describe('deeper readout figures', () => {
  const q = new Quadratic([[4, 0], [0, 1]], [0, 0]);
  const w = Float64Array.of(1, 1);
  const step = Float64Array.of(-0.2, -0.9); // t* = −gᵀd/dᵀAd = 1.7/0.97 ≈ 1.75, inside the default grid

  it('the line figure draws the loss, the model, the step taken at t = 1 and Brent\'s minimum', () => {
    const r = lineReadout(q, w, 3, step, { value: 4, vector: Float64Array.of(1, 0) });
    const f = lineFigure(r.update, IMAGE_THEME, 'along the update');
    expect(f.data.map((s) => s.name)).toEqual(['loss', 'quadratic model', 'step taken', "Brent's minimum"]);
    expect(f.data[2].x).toEqual([1, 1]);
    expect(f.data[3].x[0]).toBeCloseTo(r.update.quadraticMinimum as number, 6);
    // a minimum outside the grid is named in the title instead of stretching the axis
    const far = lineReadout(q, w, 3, Float64Array.of(-0.01, -0.01), null);
    const g = lineFigure(far.update, IMAGE_THEME, 'along the update');
    expect(g.data.map((s) => s.name)).toEqual(['loss', 'quadratic model', 'step taken']);
    expect(g.layout.title?.text).toMatch(/^along the update — Brent's minimum at t = \d+(\.\d+)?, loss [0-9.e-]+, off the plot$/);
  });

  it('the plane figure draws one line series per level, the path and the current point at the origin', () => {
    const p = planeReadout(q, w, 2, 'random', { d1: Float64Array.of(1, 0), d2: Float64Array.of(0, 1) }, { steps: [0, 1], weights: [Float64Array.of(2, 2), w] }, { points: 11 })!;
    const f = planeFigure(p, IMAGE_THEME, 8);
    expect(f.data.length).toBe(8 + 2);
    expect(f.data[8].x).toEqual([1, 0]);
    expect(f.data[9].x).toEqual([0]);
    expect(blend('#000000', '#ffffff', 0.5)).toBe('#808080');
  });

  it('the range figure puts the stability limit at its rate on a log axis', () => {
    const r = { startStep: 0, startLoss: 1, lr: [0.1, 0.3, 1], loss: [0.9, 0.5, 4], grid: [0.1, 0.3, 1], end: 'diverged', suggested: { low: 0.1, high: 0.3 },
      limit: { step: 0, sharpness: 4, errorBound: 0, lr: 0.1, largestStableLr: 0.5, margin: 0.2, formula: '2/λmax' }, beyondLimit: false } as RangeTestAtResult;
    const f = rangeFigure(r, IMAGE_THEME);
    expect(f.layout.xaxis.type).toBe('log');
    expect(f.data.map((s) => s.name)).toEqual(['loss after the update', 'suggested low', 'suggested high', 'stability limit 2/λmax']);
    expect(f.data[3].x).toEqual([0.5, 0.5]);
    expect(f.layout.yaxis.type).toBe('linear');
    // A blow-up 200x above the rest turns the loss axis logarithmic (the traces' rule: max/min above 100).
    const blown = rangeFigure({ ...r, loss: [0.004, 0.005, 0.8] }, IMAGE_THEME);
    expect(blown.layout.yaxis.type).toBe('log');
    expect(blown.layout.yaxis.title.text).toBe('loss (log scale)');
  });

  it('the batch figure draws each size by examples seen', () => {
    const f = batchFigure({ startStep: 0, budget: 4, best: 2, noiseScale: {} as never, runs: [
      { batch: 2, full: false, examples: [0, 2, 4], loss: [1, 0.5, 0.3], updates: 2, finalLoss: 0.3, diverged: false, verdict: 'reference', noise: 'near-noise-scale' },
      { batch: 4, full: true, examples: [0, 4], loss: [1, 0.6], updates: 1, finalLoss: 0.6, diverged: false, verdict: 'worse', noise: 'near-noise-scale' }] }, IMAGE_THEME);
    expect(f.data.map((s) => s.name)).toEqual(['batch 2', 'batch 4 (full)']);
    expect(f.layout.xaxis.title.text).toBe('examples seen');
  });
});
