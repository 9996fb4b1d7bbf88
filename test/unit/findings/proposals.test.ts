/**
 * Each kind of proposal, applied as a branch exactly as the cell and `stepwell run --branch` apply
 * it (patchExperiment on the spec text, then Grove.fork at `atStep`), fixes the failure it was
 * made for: the branch's loss at the same step is far below the failing branch's (at most half of
 * it; a diverged branch's is non-finite or above a thousand times its start).
 */
import { diagnoseExperiment, type Finding, type FindingId } from '../../../src/core/probe/findings';
import { experimentOf, kilnSpec, seedSpec, tryProposal } from './scenarios';

const quadratic = (diag: number[], recipe: string): string =>
  `seed: 1\nmodel:\n  objective: quadratic\n  matrix: ${JSON.stringify(diag.map((d, i) => diag.map((_, j) => (i === j ? d : 0))))}\nrecipe: ${recipe}\n`;

function proposalOf(text: string, id: FindingId, steps: number): Finding {
  const f = diagnoseExperiment(experimentOf(text), { steps, curvaturePoints: 11 }).findings.find((x) => x.id === id);
  if (f === undefined || f.proposal === null) throw new Error(`no ${id} finding with a proposal`);
  return f;
}

describe('proposals tried as branches fix their failure', () => {
  it('step-size-unstable: a warm-up that overshoots the limit, branched before the crossing with 0.9 × the limit', () => {
    const text = kilnSpec({ recipe: '{ optimizer: sgd, lr: 0.8, warmup: 30 }' });
    const f = proposalOf(text, 'step-size-unstable', 100);
    expect(Object.keys(f.proposal!.set)).toEqual(['lr']);
    expect(f.proposal!.atStep).toBeGreaterThan(0);
    const t = tryProposal(text, f.proposal!, 100);
    expect(Number.isFinite(t.failing) ? t.failing : Infinity).toBeGreaterThan(1e3);
    expect(t.fixed).toBeLessThan(0.05);
  });

  it('diverged: an unstable quadratic, branched from the last good checkpoint at 0.9 × 2/λmax', () => {
    const text = quadratic([10, 1], '{ optimizer: sgd, lr: 0.25 }');
    const f = proposalOf(text, 'diverged', 30);
    const t = tryProposal(text, f.proposal!, 30);
    expect(t.failing).toBeGreaterThan(1e6);
    // source: closed form — at η = 0.18 both directions contract (|1 − 1.8| = 0.8, 1 − 0.18 = 0.82 per step).
    expect(t.fixed).toBeLessThan(5.5 * 0.82 ** 30);
  });

  it('init-scale / saturated-units: the fan-in scheme at gain 1 from step 0', () => {
    const text = kilnSpec({ model: '  init: lecun-normal\n  gain: 6' });
    const f = proposalOf(text, 'saturated-units', 100);
    const t = tryProposal(text, f.proposal!, 100);
    expect(t.fixed).toBeLessThan(t.failing / 2);
  });

  it('inputs-unscaled: standardized inputs with lr fitted to the new limit', () => {
    const text = kilnSpec({ scaled: false, recipe: '{ optimizer: sgd, lr: 0.00001 }' });
    const f = proposalOf(text, 'inputs-unscaled', 100);
    expect(f.proposal!.set.lr).toBeGreaterThan(0);
    const t = tryProposal(text, f.proposal!, 100);
    expect(t.fixed).toBeLessThan(t.failing / 2);
  });

  it('dead-units: zeroing the dead units\' negative biases', () => {
    const w = [[0.9, -0.4], [-0.7, 0.8], [0.5, 0.6], [-0.6, -0.5], [0.8, 0.3], [-0.3, 0.9], [0.4, -0.8], [-0.9, -0.2]];
    const out = [[0.5, -0.3, 0.2, 0.4, -0.5, 0.3, -0.2, 0.1], [-0.4, 0.5, -0.1, 0.2, 0.3, -0.5, 0.4, -0.3], [0.2, 0.1, 0.5, -0.4, -0.2, 0.4, 0.3, 0.5]];
    const text = seedSpec({ model: `  weights:\n    - { weight: ${JSON.stringify(w)}, bias: [0, 0, -6, -6, -6, -6, -6, -6] }\n    - { weight: ${JSON.stringify(out)}, bias: [0, 0, 0] }` });
    const f = proposalOf(text, 'dead-units', 100);
    const t = tryProposal(text, f.proposal!, 100);
    expect(t.fixed).toBeLessThan(t.failing / 2);
  });

  it('update-ratio-high: a per-layer rate that calms the jittering output layer (mean loss over steps 80–100)', () => {
    const text = kilnSpec({ recipe: '{ optimizer: sgd, lr: 0.25, batch: 2 }' });
    const f = proposalOf(text, 'update-ratio-high', 100);
    expect(Object.keys(f.proposal!.set)).toEqual(['layers[1].lrScale']);
    const steps = [80, 85, 90, 95, 100];
    expect(steps).toHaveLength(5);
    const runs = steps.map((s) => tryProposal(text, f.proposal!, s));
    const mean = (xs: number[]) => xs.reduce((a, b) => a + b, 0) / xs.length;
    expect(mean(runs.map((r) => r.fixed))).toBeLessThan(mean(runs.map((r) => r.failing)) / 2);
  });

  it('update-ratio-low: a per-layer rate that wakes the slowed first layer', () => {
    const text = kilnSpec({ recipe: '{ optimizer: sgd, lr: 0.05, layers: [{ lrScale: 0.0001 }, { lrScale: 1 }] }' });
    const f = proposalOf(text, 'update-ratio-low', 300);
    const t = tryProposal(text, f.proposal!, 300);
    expect(t.fixed).toBeLessThan(t.failing / 2);
  });

  it('vanishing-gradient / plateau: tanh for five sigmoid layers', () => {
    const text = kilnSpec({ layers: `[${Array(5).fill('{ units: 8, activation: sigmoid }').join(', ')}, { units: 1 }]`, recipe: '{ optimizer: sgd, lr: 0.2 }' });
    const f = proposalOf(text, 'vanishing-gradient', 100);
    const t = tryProposal(text, f.proposal!, 100);
    expect(t.fixed).toBeLessThan(t.failing / 2);
  });

  it('plateau: a learning rate far below its limit, raised to half the limit', () => {
    const text = kilnSpec({ recipe: '{ optimizer: sgd, lr: 0.0001 }' });
    const f = proposalOf(text, 'plateau', 100);
    const t = tryProposal(text, f.proposal!, 100);
    expect(t.fixed).toBeLessThan(t.failing / 2);
  });

  it('ill-conditioned: L-BFGS on a quadratic with κ = 1e5', () => {
    const text = quadratic([100, 1, 0.001], '{ optimizer: sgd, lr: 0.019, momentum: 0.5 }');
    const f = proposalOf(text, 'ill-conditioned', 5);
    const t = tryProposal(text, f.proposal!, 30);
    // source: the quadratic's minimum is 0 at the centre; plain steps leave ½·0.001·1² = 5e-4 in the flattest direction.
    expect(t.failing).toBeGreaterThan(4e-4);
    expect(t.fixed).toBeLessThan(1e-10);
  });

  it('overfitting: stopping at the held-out minimum keeps the held-out loss far lower', () => {
    const text = kilnSpec({ rows: 16, heldOut: 40, noise: 0.3, layers: '[{ units: 48, activation: tanh }, { units: 1 }]', recipe: '{ optimizer: sgd, lr: 0.1 }' });
    const r = diagnoseExperiment(experimentOf(text), { steps: 400, curvaturePoints: 3 });
    const f = r.findings.find((x) => x.id === 'overfitting')!;
    const held = r.evidence.trajectory.map((x) => x.heldOutLoss as number);
    expect(held).toHaveLength(401);
    const best = Math.min(...held);
    const t = tryProposal(text, f.proposal!, 400);
    expect(t.heldFailing).toBe(held[400]);
    // The held-out loss is the failing number here: the branch's rise above the minimum is far smaller.
    expect(t.heldFixed! - best).toBeLessThan((t.heldFailing! - best) / 2);
  });
});
