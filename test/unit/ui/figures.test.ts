/**
 * Pure figure and text builders of the cell widget, tested without a browser.
 */
import { chooseScale, decimate, traceFigure, traceText } from '../../../src/figures/trace';
import type { FigureTheme } from '../../../src/figures/trace';
import { auditRows, escapeMarkdown, fmt, markdownSummary, meanMs, MIN_TIMED_MS, msBound, problemLine, statusLine, verifyLine } from '../../../src/ui/summary';
import { readNumber } from '../../../src/ui/forms';
import type { StepRecord } from '../../../src/core/state';

const theme: FigureTheme = { foreground: '#111', grid: '#ccc', background: '#fff', train: '#00f', heldOut: '#f80', alert: '#f00', font: 'sans', series: ['#00f', '#f80', '#0a0'] };

const rec = (step: number, loss: number, heldOutLoss?: number): StepRecord => ({
  step, loss, batchLoss: loss, gradNorm: 1, updateNorm: 0.1, lr: 0.1, evaluations: 1, layers: [], ms: 0.5, ...(heldOutLoss === undefined ? {} : { heldOutLoss })
});

describe('traceFigure', () => {
  it('plots training loss per step in the theme colour', () => {
    const f = traceFigure([rec(0, 2), rec(1, 1.5), rec(2, 1.2)], theme);
    expect(f.data).toHaveLength(1);
    expect(f.data[0].x).toEqual([0, 1, 2]);
    expect(f.data[0].y).toEqual([2, 1.5, 1.2]);
    expect(f.data[0].line.color).toBe('#00f');
    expect(f.layout.paper_bgcolor).toBe('#fff');
    expect(f.layout.yaxis.type).toBe('linear');
    expect(f.layout.showlegend).toBe(false);
  });

  it('never has plotly hide tick labels (its default re-measures every label per label drawn)', () => {
    const f = traceFigure([rec(0, 2), rec(1, 1.5), rec(2, 1.2)], theme);
    expect(f.layout.xaxis.ticklabeloverflow).toBe('allow');
    expect(f.layout.yaxis.ticklabeloverflow).toBe('allow');
  });

  it('ticks whole steps and keeps the legend at the top left, clear of the plot toolbar', () => {
    const f = traceFigure([rec(0, 2), rec(1, 1.5), rec(2, 1.2), rec(3, 1)], theme);
    expect(f.layout.xaxis).toMatchObject({ tickmode: 'linear', tick0: 0, dtick: 1 });
    expect(f.layout.legend).toMatchObject({ x: 0, xanchor: 'left' });
  });

  it('says in words what the trace shows', () => {
    expect(traceText([rec(0, 2), rec(1, 1.5), rec(2, Infinity), rec(3, NaN)], 1)).toBe('Training loss per step: 2 at step 0, 1.5 at step 1. Steps 2–3 are kept after it. The loss is not finite from step 2.');
    expect(traceText([])).toBe('No steps yet.');
  });

  it('draws the steps kept after the cursor dotted and leaves their held-out loss out', () => {
    const f = traceFigure([rec(0, 2, 2.5), rec(1, 1.5, 2), rec(2, 1.2, 1.8), rec(3, 1, 1.7)], theme, { cursor: 1 });
    expect(f.data.map(d => [d.name, d.x])).toEqual([['training loss', [0, 1]], ['kept steps after 1', [1, 2, 3]], ['held-out loss', [0, 1]]]);
    expect(f.data[1].line.dash).toBe('dot');
    expect(f.layout.showlegend).toBe(true);
  });

  it('adds the held-out series and a legend when the setup has a split', () => {
    const f = traceFigure([rec(0, 2, 2.5), rec(1, 1, 1.8)], theme);
    expect(f.data.map(d => d.name)).toEqual(['training loss', 'held-out loss']);
    expect(f.data[1].y).toEqual([2.5, 1.8]);
    expect(f.data[1].line.color).toBe('#f80');
    expect(f.layout.showlegend).toBe(true);
  });

  it('leaves gaps for non-finite losses and notes the first one', () => {
    const f = traceFigure([rec(0, 2), rec(1, 1e3), rec(2, Infinity), rec(3, NaN)], theme);
    expect(f.data[0].y).toEqual([2, 1000, null, null]);
    expect(f.layout.annotations).toHaveLength(1);
    expect(f.layout.annotations[0].text).toBe('loss not finite at step 2');
    expect(f.layout.annotations[0].x).toBe(2);
  });

  it('switches to a log axis when positive losses span more than two decades', () => {
    expect(chooseScale([10, 0.01])).toBe('log');
    expect(chooseScale([10, 1])).toBe('linear');
    expect(chooseScale([10, -0.01, 0.001])).toBe('linear');
    expect(traceFigure([rec(0, 100), rec(1, 0.5)], theme).layout.yaxis.type).toBe('log');
    expect(traceFigure([rec(0, 100), rec(1, 0.5)], theme).layout.yaxis.exponentformat).toBe('power');
    expect(traceFigure([rec(0, 100), rec(1, 0.5)], theme, { scale: 'linear' }).layout.yaxis.type).toBe('linear');
  });
});

describe('decimate', () => {
  it('keeps short series as they are', () => {
    expect(decimate([0, 1, 2], [3, null, 1], 10)).toEqual({ x: [0, 1, 2], y: [3, null, 1] });
  });

  it('reduces long series but keeps the ends, the extremes and the gaps', () => {
    const n = 10000;
    const x = Array.from({ length: n }, (_, i) => i);
    const y: (number | null)[] = x.map(i => Math.sin(i / 50));
    y[4321] = 99;
    y[7000] = null;
    const d = decimate(x, y, 500);
    expect(d.x.length).toBeLessThanOrEqual(3 * 500);
    expect(d.x[0]).toBe(0);
    expect(d.x[d.x.length - 1]).toBe(n - 1);
    expect(d.y).toContain(99);
    expect(d.y).toContain(null);
    expect([...d.x].sort((a, b) => a - b)).toEqual(d.x);
  });
});

describe('summary texts', () => {
  it('formats numbers for people', () => {
    expect(fmt(0.0132456789)).toBe('0.0132457');
    expect(fmt(1.5e-5)).toBe('1.500e-5');
    expect(fmt(NaN)).toBe('NaN');
    expect(fmt(Infinity)).toBe('∞');
    expect(fmt(null)).toBe('—');
  });

  it('writes a status line with step, loss, timing and ledger size', () => {
    expect(statusLine({ step: 40, last: rec(40, 0.0132, 0.0171), msPerStep: 0.42, ledgerBytes: 14200 }))
      .toBe('step 40 · loss 0.0132 · held-out 0.0171 · 0.42 ms/step · ledger 14.2 kB');
    expect(statusLine({ step: 9, last: rec(9, 1), msPerStep: 0.0042 })).toBe('step 9 · loss 1 · 4.2 µs/step');
  });

  it('gives a timing only when the measured time is well above the browser timer’s ~0.1 ms resolution', () => {
    // one fast update reads 0 or 0.1 ms in a browser: no "0.0 µs/step"
    expect(meanMs([rec(0, 1), { ...rec(1, 1), ms: 0.1 }])).toBeUndefined();
    const many = Array.from({ length: 100 }, (_, i) => ({ ...rec(i + 1, 1), ms: 0.1 }));
    expect(meanMs(many)).toBeCloseTo(0.1, 12);
    expect(MIN_TIMED_MS).toBe(5);
    expect(statusLine({ step: 1, last: rec(1, 1), msPerStep: undefined })).toBe('step 1 · loss 1');
  });

  it('says how fast steps too short to time were at most, instead of nothing (after a reload, say)', () => {
    // 20 steps timed at 0.1 ms each total 2 ms < MIN_TIMED_MS: their mean is below 5 ms / 20 = 0.25 ms.
    const quick = Array.from({ length: 20 }, (_, i) => ({ ...rec(i + 1, 1), ms: 0.1 }));
    expect(meanMs(quick)).toBeUndefined();
    expect(msBound(quick)).toBeCloseTo(0.25, 12);
    expect(statusLine({ step: 20, last: rec(20, 1), msBelow: msBound(quick) })).toBe('step 20 · loss 1 · < 0.25 ms/step');
    expect(msBound([rec(0, 1)])).toBeUndefined();
    const slow = Array.from({ length: 10 }, (_, i) => ({ ...rec(i + 1, 1), ms: 1 }));
    expect(msBound(slow)).toBeUndefined();
    expect(statusLine({ step: 10, last: rec(10, 1), msPerStep: meanMs(slow), msBelow: 0.5 })).toBe('step 10 · loss 1 · 1.0 ms/step');
  });

  it('places spec problems at their line', () => {
    expect(problemLine({ path: 'recipe.lr', message: 'recipe.lr must be positive', line: 31, col: 7 }))
      .toBe('line 31:7 (recipe.lr): recipe.lr must be positive');
    expect(problemLine({ path: '', message: 'the spec is empty' })).toBe('spec: the spec is empty');
  });

  it('escapes user text in the markdown fallback and carries the proxy note', () => {
    const md = markdownSummary({ version: 2, branch: 'main', branches: [], step: 3, loss: 0.5, heldOutLoss: null, recipe: 'sgd η=0.1, full batch', setup: 'net <b>x</b>', fingerprint: 'ab12<script>', parameterCount: 26 });
    expect(md).toContain('step 3');
    expect(md).not.toContain('<b>');
    expect(md).toContain('\\<b\\>');
    expect(md).toContain('`ab12c`');
    expect(md).toContain('not a guarantee');
    expect(escapeMarkdown('a*b_c')).toBe('a\\*b\\_c');
  });

  it('lists the branches in the markdown fallback, each with its origin, change, step and loss', () => {
    const line = (name: string, parent: string | null, forkStep: number | null, patchText: string, step: number, tip: number, loss: number | null) => ({ name, parent, forkStep, patchText, step, tip, loss });
    const md = markdownSummary({
      version: 2, branch: 'lr=0.4', step: 30, loss: 0.01, heldOutLoss: null, recipe: 'sgd η=0.4, full batch', setup: 'net', fingerprint: 'ab', parameterCount: 9,
      branches: [line('main', null, null, '', 12, 40, null), line('lr=0.4', 'main', 10, 'lr=0.4', 30, 30, 0.01)]
    });
    expect(md).toContain('**Branches** (2):');
    expect(md).toContain('| main | — | the spec as written | 12 (of 40) | — |');
    expect(md).toContain('| lr=0.4 (shown) | main at step 10 | lr=0.4 | 30 | 0.01 |');
  });

  it('states verify outcomes in one sentence', () => {
    expect(verifyLine({ branch: 'main', match: 'bit-identical', steps: 10, expected: 'a'.repeat(64), actual: 'a'.repeat(64) })).toContain('bit-identical');
    expect(verifyLine({ branch: 'main', match: 'differs', steps: 10, firstDifferingStep: 4, expected: 'a'.repeat(64), actual: 'b'.repeat(64) })).toContain('differs at step 4');
    expect(verifyLine({ branch: 'main', match: 'differs', steps: 10, firstDifferingStep: 0, expected: 'a'.repeat(64), actual: 'b'.repeat(64) })).toContain('starting point already differs');
  });

  it('formats audit layers without recomputing verdicts', () => {
    const rows = auditRows({
      loss: 1, parameterCount: 26, checked: 26, sampled: false, h: 1e-5, maxRelError: 0.2, verdict: 'wrong', entries: [], sweep: [],
      bestOverSweep: { h: 1e-5, maxRelError: 0.2, medianRelError: 0.1 },
      layers: [{ layer: 0, blocks: ['layers[0].weight', 'layers[0].bias'], checked: 20, total: 20, maxRelError: 0.2, medianRelError: 0.1, worstIndex: 3, worstBlock: 'layers[0].weight', worstAt: [0, 3], verdict: 'wrong' }]
    });
    expect(rows).toEqual([{ name: 'layer 0 (layers[0].weight, layers[0].bias)', max: '2.00e-1', median: '1.00e-1', worst: 'layers[0].weight[0, 3]', checked: '20 / 20', verdict: 'wrong' }]);
  });
});

describe('form input', () => {
  it('reads numbers with messages that name the field', () => {
    expect(readNumber('25', 'N', true, 1)).toBe(25);
    expect(readNumber('2.5', 'N', true, 1)).toBe('N must be a whole number, got 2.5');
    expect(readNumber('abc', 'N', true, 1)).toBe("N must be a number, got 'abc'");
    expect(readNumber('0', 'N', true, 1)).toBe('N must be at least 1, got 0');
  });

});
