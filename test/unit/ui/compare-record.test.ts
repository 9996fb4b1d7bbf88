/**
 * The comparison figures, their text alternative and the decision record as pure functions of
 * the worker's comparison (hand-made traces here: these test layout and wording, not numerics).
 */
import { branchLabel, comparisonFigure, comparisonText, drawnFrom, sharpnessOverlayFigure } from '../../../src/figures/compare';
import { decisionRecord, recordMeta, RECORD_IMAGE } from '../../../src/ui/decision-record';
import { stepAxis, IMAGE_THEME, type FigureTheme } from '../../../src/figures/trace';
import { limitFormula } from '../../../src/ui/curvature-figure';
import type { BranchComparison, BranchTrace } from '../../../src/worker/protocol';

const theme: FigureTheme = { ...IMAGE_THEME, series: ['#a00', '#0a0', '#00a'] };

function trace(name: string, parent: string | null, forkStep: number | null, steps: number[], loss: (s: number) => number, extra: Partial<BranchTrace> = {}): BranchTrace {
  return {
    name, parent, forkStep, patchText: parent === null ? '' : 'lr=0.4', restart: false, recipe: 'sgd η=0.4, full batch',
    steps, examples: steps.map(s => 60 * s), loss: steps.map(loss), heldOut: null, sharpness: [],
    step: steps[steps.length - 1], fingerprint: 'a'.repeat(64), tip: steps[steps.length - 1], tipFingerprint: (name === 'main' ? 'b' : 'c').repeat(64),
    recipeYaml: 'seed: 11\nrecipe:\n  optimizer: sgd\n  lr: 0.4\n', findings: [], tried: [], ...extra
  };
}

const range = (n: number) => Array.from({ length: n + 1 }, (_, i) => i);
const main = trace('main', null, null, range(40), s => (s < 30 ? 1 / (s + 1) : s === 40 ? NaN : 10 ** (s - 30)));
const fix = trace('lr=0.4', 'main', 25, range(40), s => 1 / (s + 1));

const comparison: BranchComparison = {
  reference: 'main',
  branches: ['main', 'lr=0.4'],
  steps: [{
    step: 39, reasons: ['end'], cells: [
      { branch: 'main', loss: 1e9, heldOutLoss: null, gradNorm: 5e4, updateRatios: [0.5, 2], examples: 2340, lambdaMax: 30, sharpness: 30, limit: 2.2, stable: false, verdict: 'reference', heldOutVerdict: null },
      { branch: 'lr=0.4', loss: 0.025, heldOutLoss: null, gradNorm: 0.01, updateRatios: [1e-3, 2e-3], examples: 2340, lambdaMax: null, sharpness: null, limit: null, stable: null, verdict: 'better', heldOutVerdict: null }
    ]
  }],
  crossings: [{ branch: 'main', step: 27, sharpness: 2.4, limit: 2.2, measured: 10 }, { branch: 'lr=0.4', step: null, sharpness: null, limit: null, measured: 0 }],
  best: { step: 39, branch: 'lr=0.4' }
};

describe('comparison figure', () => {
  it('draws one line per branch, a fork from its fork step when its parent is drawn, with a diamond at the fork', () => {
    const f = comparisonFigure([main, fix], 'step', theme);
    const lines = f.data.filter(d => d.showlegend !== false);
    expect(lines.map(d => d.name)).toEqual(['main', 'lr=0.4 (lr=0.4 from main@25)']);
    expect(lines[0].x[0]).toBe(0);
    expect(lines[1].x[0]).toBe(25);
    expect(lines[1].line.color).toBe('#0a0');
    const fork = f.data.find(d => d.showlegend === false);
    expect(fork?.x).toEqual([25]);
    expect(fork?.marker?.symbol).toBe('diamond');
    expect(f.layout.annotations.map(a => a.text)).toEqual(['main: loss not finite']);
    expect(f.layout.yaxis.type).toBe('log');
    // alone, the fork is drawn from step 0
    expect(drawnFrom(fix, [fix])).toBe(0);
  });

  it('puts examples drawn on the x axis when asked and every branch has them', () => {
    const f = comparisonFigure([main, fix], 'examples', theme);
    expect(f.layout.xaxis.title.text).toBe('examples drawn');
    expect(f.data[0].x[10]).toBe(600);
    const noRows = comparisonFigure([main, { ...fix, examples: null }], 'examples', theme);
    expect(noRows.layout.xaxis.title.text).toBe('step');
  });

  it('overlays sharpness with each branch’s limit in its own colour', () => {
    const withSharp = { ...main, sharpness: [{ step: 0, lambdaMax: 1, sharpness: 1, limit: 2.2, preconditioned: false }, { step: 10, lambdaMax: 3, sharpness: 3, limit: 2.2, preconditioned: false }] };
    const f = sharpnessOverlayFigure([withSharp, fix], theme);
    expect(f.data.map(d => [d.name, d.line.color, d.line.dash ?? 'solid'])).toEqual([['main: λmax', '#a00', 'solid'], ['main: limit', '#a00', 'dash']]);
    // 1 to 3: linear; a λmax that grows past 10× its limit turns the axis logarithmic (and says so).
    expect(f.layout.yaxis.type).toBe('linear');
    const grown = { ...withSharp, sharpness: [...withSharp.sharpness, { step: 20, lambdaMax: 30, sharpness: 30, limit: 2.2, preconditioned: false }] };
    const g = sharpnessOverlayFigure([grown, fix], theme);
    expect([g.layout.yaxis.type, g.layout.yaxis.title.text]).toEqual(['log', 'sharpness (log scale)']);
    // 1 to 30 is 1.5 decades: ticks at every doubling, written in full.
    expect([g.layout.yaxis.tickmode, g.layout.yaxis.dtick, g.layout.yaxis.exponentformat]).toEqual(['linear', Math.log10(2), 'none']);
    expect(f.layout.yaxis.dtick).toBeUndefined();
  });

  it('has a text alternative naming every branch and where its trace ends', () => {
    expect(comparisonText([main, fix], 'step')).toBe(
      'Training loss of 2 branches by step. main: loss not finite from step 40; lr=0.4 (forked from main at step 25 with lr=0.4): training loss 0.0243902 at step 40.'
    );
    expect(branchLabel(main)).toBe('main');
  });
});

describe('axes and legends', () => {
  it.each([[3, 1], [10, 2], [40, 5], [100, 20], [1000, 200], [0, 1]])('a step axis over %p steps ticks every %p', (max, dtick) => {
    expect(stepAxis(theme, max)).toMatchObject({ tickmode: 'linear', tick0: 0, dtick });
  });

  it('names the curvature limit line by λ, not by the formula of the largest stable η', () => {
    expect(limitFormula('2/λmax')).toBe('λ = 2/η');
    expect(limitFormula('2(1+μ)/λmax')).toBe('λ = 2(1+μ)/η');
  });
});

describe('decision record', () => {
  const findings: BranchTrace['findings'] = [{ id: 'step-size-unstable', severity: 'problem', layer: null, step: 27, measured: 2.4, threshold: 2.2, source: 'Nocedal & Wright 2006, ch. 3', statement: 'λmax 2.4 exceeds 2/η = 2.2 at step 27.', proposal: { atStep: 26, set: { lr: 0.4 } } }];
  const withFindings = { ...main, findings, tried: ['lr=0.4'] };
  const md = decisionRecord({ question: 'Which step size | for the *sensor*?', chosen: 'lr=0.4', comparison, traces: [withFindings, fix], image: RECORD_IMAGE, figureText: comparisonText([main, fix], 'step') });

  it('states question and choice, escaping user text', () => {
    expect(md.startsWith('## Decision record: Which step size \\| for the \\*sensor\\*?\n')).toBe(true);
    expect(md).toContain('**Chosen: branch `lr=0.4`** — sgd η=0.4, full batch, forked from main at step 25 with lr=0.4.');
    expect(md).toContain('the lowest training loss is on **lr=0.4**');
  });

  it('lists the branches and the numbers at matched steps, one row per branch and step', () => {
    const rows = md.split('\n').filter(l => /^\| 39 \|/.test(l));
    expect(rows).toHaveLength(comparison.steps[0].cells.length);
    expect(rows[0]).toBe('| 39 | main | 1.000e+9 | reference | — | 50000 | 0.5, 2 | 30 / 2.2 (above) |');
    expect(rows[1]).toBe('| 39 | lr=0.4 | 0.025 | lower | — | 0.01 | 0.001, 0.002 | not measured |');
    expect(md).toContain('| lr=0.4 | main at step 25 | lr=0.4 | sgd η=0.4, full batch | 40 |');
    expect(md).toContain('- main: the sharpness first exceeded the stability limit at step 27 (2.4 > 2.2).');
    expect(md).toContain('- lr=0.4: sharpness not tracked.');
  });

  it('lists findings with their sources, the recipe as YAML, the fingerprints in full and the figure', () => {
    expect(md).toContain('- **problem `step-size-unstable`** (branch main, step 27): λmax 2.4 exceeds 2/η = 2.2 at step 27. Measured: learning rate 2.4 · threshold 2.2. Source: Nocedal & Wright 2006, ch. 3. Proposal: from step 26, lr=0.4 — tried as branch lr=0.4.');
    expect(md).toContain('*Proposals are measured on this small proxy experiment: a guess to confirm at full scale, not a prescription.*');
    expect(md).toContain('```yaml\nseed: 11\nrecipe:\n  optimizer: sgd\n  lr: 0.4\n```');
    expect(md).toContain(`| main | 40 | \`${'b'.repeat(64)}\` |`);
    expect(md).toContain(`| lr=0.4 | 40 | \`${'c'.repeat(64)}\` |`);
    expect(md).toContain(`](attachment:${RECORD_IMAGE})`);
    expect(md).toContain('not a guarantee');
  });

  it('says when no findings were recorded, and refuses a choice outside the comparison', () => {
    const none = decisionRecord({ question: 'q', chosen: 'main', comparison, traces: [main, fix], image: null, figureText: 'f' });
    expect(none).toContain('The compared branches have no findings.');
    expect(none).not.toContain('Proposals are measured');
    expect(none).not.toContain('attachment:');
    expect(() => decisionRecord({ question: 'q', chosen: 'other', comparison, traces: [main, fix], image: null, figureText: 'f' }))
      .toThrow("the chosen branch 'other' is not among the compared branches (main, lr=0.4)");
    expect(recordMeta('c1', { question: 'q', chosen: 'main', traces: [main] })).toEqual({ version: 1, cell: 'c1', question: 'q', chosen: 'main', branches: [{ name: 'main', tip: 40, fingerprint: 'b'.repeat(64) }] });
  });
});
