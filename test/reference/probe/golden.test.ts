/**
 * The diagnosis readouts against PyTorch and NumPy (golden.json, made by make_golden.py beside
 * it): activation statistics, per-layer ‖W‖, ‖∇W‖, ‖ΔW‖/‖W‖ and the held-out loss along
 * optimizer trajectories, and the simple gradient noise scale.
 *
 * Tolerances: 1e-10 relative for statistics and norms (float64 on both sides; sums taken in a
 * different order differ by a few ulps times the row count); 1e-9 along trajectories (the same
 * bound the optimizer golden tests use for first-order methods); counts exactly.
 */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { parseSpecValue } from '../../../src/experiment';
import type { Experiment, NetworkModel } from '../../../src/core/setup';
import { Network } from '../../../src/core/model/network';
import { Rng } from '../../../src/core/rng';
import { Session } from '../../../src/core/session';
import { initialParameters } from '../../../src/core/assemble';
import { activationHealth } from '../../../src/core/probe/activation-health';
import { gradientNoiseScale } from '../../../src/core/probe/noise-scale';

interface LayerGolden { preMean: number; preSpread: number; saturatedShare: number | null; deadShare: number | null; histogram: { counts: number[]; below: number; above: number } }
interface Golden {
  header: Record<string, string>;
  activations: { name: string; spec: unknown; layers: LayerGolden[] }[];
  trajectories: { name: string; steps: number; spec: unknown; records: { loss: number; heldOutLoss: number; weightNorms: number[]; gradNorms: number[]; updateRatios: number[] }[] }[];
  noise: { name: string; spec: unknown; traceCovariance: number; gradientSquared: number; noiseScale: number }[];
}

const golden = JSON.parse(readFileSync(join(__dirname, 'golden.json'), 'utf8')) as Golden;
const rel = (a: number, b: number): number => Math.abs(a - b) / Math.max(Math.abs(b), 1e-300);

function experiment(spec: unknown): Experiment {
  const r = parseSpecValue(spec);
  if (!r.ok) throw new Error(r.errors.map((e) => e.message).join('\n'));
  return r.experiment;
}

describe('activation statistics against PyTorch', () => {
  it('has the four cases', () => expect(golden.activations.map((c) => c.name)).toEqual(['tanh-oversized', 'sigmoid-wide', 'relu-negative-bias', 'leaky-relu-mixed']));

  it.each(golden.activations.map((c) => [c.name, c] as const))('%s', (_n, c) => {
    const e = experiment(c.spec);
    const model = e.setup.model as NetworkModel;
    const net = new Network(model, e.setup.data!, e.setup.loss, 0);
    const h = activationHealth(net, model, initialParameters(e.setup, Rng.fromSeed(e.seed).fork('init')), 0);
    expect(h.layers).toHaveLength(c.layers.length);
    c.layers.forEach((g, l) => {
      const m = h.layers[l];
      // source: torch.Tensor.mean / std(unbiased=False) of the same pre-activations (PyTorch 1.13).
      expect(rel(m.preMean, g.preMean)).toBeLessThan(1e-10);
      expect(rel(m.preSpread, g.preSpread)).toBeLessThan(1e-10);
      expect(m.saturatedShare).toBe(g.saturatedShare);
      expect(m.deadShare).toBe(g.deadShare);
      expect(m.histogram.counts).toEqual(g.histogram.counts);
      expect(m.histogram.below).toBe(g.histogram.below);
      expect(m.histogram.above).toBe(g.histogram.above);
    });
  });

  it('covers a saturated tanh layer, a saturated sigmoid layer and dead ReLU units', () => {
    const layers = golden.activations.flatMap((c) => c.layers);
    expect(layers.some((l) => (l.saturatedShare ?? 0) > 0.3)).toBe(true);
    expect(golden.activations[1].layers[0].saturatedShare).toBeGreaterThan(0.3);
    expect(layers.some((l) => (l.deadShare ?? 0) > 0.3)).toBe(true);
  });
});

describe('per-layer norms and held-out loss along trajectories against torch.optim', () => {
  it('has the three trajectories of at least 10 steps', () => {
    expect(golden.trajectories.map((t) => t.name)).toEqual(['tanh-mse-sgd', 'relu-ce-momentum-decay-layer-scales', 'sigmoid-bce-adam']);
    for (const t of golden.trajectories) expect(t.steps).toBeGreaterThanOrEqual(10);
  });

  it.each(golden.trajectories.map((t) => [t.name, t] as const))('%s', (_n, t) => {
    const s = Session.create(experiment(t.spec));
    const records = s.step(t.steps);
    expect(records).toHaveLength(t.records.length);
    records.forEach((r, k) => {
      const g = t.records[k];
      expect(r.layers).toHaveLength(g.weightNorms.length);
      // source: torch.optim on identical weights and data (PyTorch 1.13), norms by torch.Tensor.norm.
      expect(rel(r.loss, g.loss)).toBeLessThan(1e-9);
      expect(rel(r.heldOutLoss!, g.heldOutLoss)).toBeLessThan(1e-9);
      r.layers.forEach((l, i) => {
        expect(rel(l.weightNorm, g.weightNorms[i])).toBeLessThan(1e-9);
        expect(rel(l.gradNorm, g.gradNorms[i])).toBeLessThan(1e-9);
        expect(rel(l.updateRatio, g.updateRatios[i])).toBeLessThan(1e-9);
      });
    });
  });
});

describe('gradient noise scale against NumPy and PyTorch', () => {
  it.each(golden.noise.map((c) => [c.name, c] as const))('%s', (_n, c) => {
    const e = experiment(c.spec);
    const s = Session.create(e);
    const n = gradientNoiseScale(s.objective, Float64Array.from(s.parameters), Rng.fromSeed(0), { sample: 1000 });
    expect(n.sampleRows).toBe(n.totalRows);
    // source: numpy closed form of per-example MSE gradients / torch autograd one row at a time.
    expect(rel(n.traceCovariance, c.traceCovariance)).toBeLessThan(1e-10);
    expect(rel(n.gradientSquared, c.gradientSquared)).toBeLessThan(1e-10);
    expect(rel(n.noiseScale!, c.noiseScale)).toBeLessThan(1e-10);
  });
});
