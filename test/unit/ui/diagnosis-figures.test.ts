/**
 * The diagnosis figures and the findings strip's wording as pure functions (hand-made inputs:
 * these test layout and words; the numbers they draw are checked where they are computed), and
 * the run-until form's conditions.
 */
import { balanceHeatMap, heatZone, histogramFigure } from '../../../src/ui/diagnosis-figures';
import { foldedText, measuredLine, shownCount, sourceText, whereLine } from '../../../src/ui/findings-strip';
import { conditionText, readCondition, thresholdText } from '../../../src/ui/forms';
import { HISTOGRAM_EDGES } from '../../../src/core/probe/activation-health';
import type { LayerBalance } from '../../../src/core/probe/balance';
import type { Finding } from '../../../src/worker/protocol';

const finding = (severity: Finding['severity'], id: Finding['id'] = 'plateau'): Finding => ({
  id, severity, layer: null, step: 3, measured: 0.5, threshold: 0.25, source: 'source: a paper, 2001', statement: 's', proposal: null
});

describe('small histogram', () => {
  const counts = new Array<number>(24).fill(0);
  counts[12] = 40; // [0, 0.5)
  counts[11] = 10; // [-0.5, 0)
  const h = { edges: [...HISTOGRAM_EDGES], counts, below: 2, above: 0, nonFinite: 1 };

  it('draws one bar per bin plus the two outside ones, heights against the tallest', () => {
    const f = histogramFigure(h, 2, 130, 40);
    expect(f.bars).toHaveLength(26);
    expect(f.bars[13].height).toBe(40);
    expect(f.bars[12].height).toBe(10);
    expect(f.bars[0].height).toBe(2);
    expect(f.bars[25].height).toBe(0);
    expect(f.bars[13].label).toBe('[0, 0.5): 40 of 53');
    expect(f.text).toBe('Histogram of 53 pre-activations on [-6, 6) in bins of 0.5; most in [0, 0.5) (40); 2 below, 0 above, 1 not finite.');
  });

  it('marks ±threshold symmetrically, and nothing for activations that do not saturate', () => {
    const f = histogramFigure(h, 2, 130, 40);
    expect(f.marks).toHaveLength(2);
    expect(f.marks[0] + f.marks[1]).toBeCloseTo(130, 10);
    expect(histogramFigure(h, null).marks).toEqual([]);
  });
});

describe('layer-balance heat map', () => {
  const band = { center: 1e-3, low: 1e-4, high: 1e-2, farLow: 1e-5, farHigh: 1e-1 };

  it.each([
    [-6, 'far-low'], [-4.5, 'low'], [-4, 'band'], [-3, 'band'], [-2, 'band'], [-1.5, 'high'], [-0.5, 'far-high'], [null, 'none']
  ])('log10 ratio %p lies in zone %s', (v, zone) => {
    expect(heatZone(v as number | null, band)).toBe(zone);
  });

  it('has a row per layer and a cell per step, labelled for screen readers', () => {
    const b: LayerBalance = {
      steps: [1, 2], layers: [0, 1], log10Ratio: [[-3, -6], [null, -0.5]], depthRatio: [[0.5, 1], [0.4, 1]], band,
      window: { from: 1, to: 2, records: 2 }, earlyWindow: { from: 0, to: 2, records: 3 },
      recent: [{ layer: 0, medianRatio: 1e-3, verdict: 'within', firstOutside: null, medianDepthRatio: 0.45, earlyDepthRatio: 0.45 }, { layer: 1, medianRatio: 0.3, verdict: 'high', firstOutside: 2, medianDepthRatio: 1, earlyDepthRatio: 1 }]
    };
    const m = balanceHeatMap(b);
    expect(m.rows.map(r => r.cells.map(c => c.zone))).toEqual([['band', 'none'], ['far-low', 'far-high']]);
    expect(m.rows[0].cells[0].label).toBe('step 1, layer 0: log10 ratio -3.00 (ratio 1.0e-3)');
    expect(m.rows[0].cells[1].label).toBe('step 2, layer 0: no update');
    expect(m.legend.map(l => l.zone)).toEqual(['far-low', 'low', 'band', 'high', 'far-high', 'none']);
    expect(m.text).toBe('log10(‖ΔW‖/‖W‖) for 2 layers at 2 steps from 1 to 2. Median over the last 2 updates: layer 0 1.0e-3 (within); layer 1 3.0e-1 (high).');
  });
});

describe('findings strip wording', () => {
  it('lists every problem and at least three, folding the rest with a count per severity', () => {
    const many = [finding('problem'), finding('problem'), finding('problem'), finding('problem'), finding('warning'), finding('info')];
    expect(shownCount(many)).toBe(4);
    expect(foldedText(many.slice(4))).toBe('1 warning, 1 info');
    expect(shownCount([finding('warning'), finding('info')])).toBe(2);
    expect(foldedText([finding('warning'), finding('warning')])).toBe('2 warnings');
  });

  it('writes the measured number against its threshold, where it was measured, and the source without its tag', () => {
    expect(measuredLine(finding('warning'))).toBe('loss decrease over the window 50 % · threshold 25 %');
    expect(measuredLine({ ...finding('problem', 'step-size-unstable'), measured: 0.9, threshold: 0.736015 })).toBe('learning rate 0.9 · threshold 0.736015');
    expect(measuredLine({ ...finding('problem', 'diverged'), measured: 12153.3, threshold: 1000 })).toBe('loss against its start 12200× · threshold 1000×');
    expect(measuredLine({ ...finding('problem', 'diverged'), measured: Infinity, threshold: 1000 })).toBe('loss against its start ∞ · threshold 1000×');
    expect(measuredLine({ ...finding('warning', 'saturated-units'), measured: 0.945833, threshold: 0.3 })).toBe('saturated share 94.6 % · threshold 30 %');
    expect(whereLine({ ...finding('warning'), layer: 2 })).toBe('step 3, layer 2');
    expect(whereLine({ ...finding('warning'), step: null })).toBe('the data');
    expect(sourceText('source: a paper, 2001')).toBe('a paper, 2001');
    expect(sourceText('common practice (no single source): x')).toBe('common practice (no single source): x');
  });
});

describe('run-until conditions', () => {
  it('gives each condition its own threshold when switching, never carrying 0.001 into a growth factor', () => {
    expect(thresholdText('diverged', { 'loss-below': '0.001' })).toBe('1000');
    expect(thresholdText('loss-below', { 'loss-below': '0.02', diverged: '50' })).toBe('0.02');
    expect(thresholdText('grad-norm-below', {})).toBe('0.001');
  });

  it('reads the form and refuses a growth factor of 1 or less', () => {
    expect(readCondition('diverged', '1000')).toEqual({ kind: 'diverged', factor: 1000 });
    expect(readCondition('diverged', '0.001')).toBe('the factor must be above 1 (the loss grows above factor × its value at the start of the run), got 0.001');
    expect(readCondition('loss-below', 'x')).toBe("the threshold must be a number, got 'x'");
    expect(conditionText({ kind: 'diverged' })).toBe('loss above 1000 × its start');
    expect(conditionText({ kind: 'grad-norm-below', value: 1e-4 })).toBe('gradient norm ≤ 0.0001');
  });
});
