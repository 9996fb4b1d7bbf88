import { AuditDivergedError, auditGradient, auditVerdict, SWEEP_STEPS } from '../../../src/core/probe/gradcheck';
import type { Activation } from '../../../src/core/model/activations';
import { activation } from '../../../src/core/model/activations';
import { Rng } from '../../../src/core/rng';
import { tinyNet } from '../model/fixtures';

// A tanh whose derivative is written wrongly as 1 − f instead of 1 − f² (the kind of slip a
// user's custom piece has).
const tanhOk = activation('tanh');
const brokenTanh: Activation = {
  ...tanhOk,
  evaluate(a, f, d1, d2, n) {
    tanhOk.evaluate(a, f, d1, d2, n);
    for (let i = 0; i < n; i++) d1[i] = 1 - f[i];
  },
};

describe('gradient audit', () => {
  // source: Stanford CS231n notes on gradient checking (from memory): < 1e-7 right,
  // 1e-4 … 1e-2 suspicious, > 1e-2 wrong.
  it.each([[1e-9, 'right'], [1e-6, 'acceptable'], [1e-3, 'suspicious'], [0.5, 'wrong'], [NaN, 'wrong']] as const)(
    'relative error %p is %s', (e, v) => expect(auditVerdict(e)).toBe(v));

  it('passes a correct network in every layer', () => {
    const { net, w } = tinyNet('tanh', 'cross-entropy', 3);
    const r = auditGradient(net, w);
    expect(r.sampled).toBe(false);
    expect(r.checked).toBe(net.parameterCount);
    expect(r.verdict).toBe('right');
    expect(r.layers.map((l) => l.verdict)).toEqual(['right', 'right', 'right']);
  });

  it('catches a deliberately wrong activation derivative in the layer that has it', () => {
    const { net, w } = tinyNet('tanh', 'mse', 3, 0, { activationOf: (l) => (l === 1 ? brokenTanh : undefined) });
    const r = auditGradient(net, w);
    const [l0, l1, l2] = r.layers;
    // The wrong σ′ of layer 1 corrupts ∂/∂W of layers 0 and 1 (both lie below it in the
    // reverse pass); layer 2 (above it) stays right.
    expect(l1.verdict).toBe('wrong');
    expect(l0.verdict === 'wrong' || l0.verdict === 'suspicious').toBe(true);
    expect(l2.verdict).toBe('right');
    expect(r.verdict).toBe('wrong');
    expect(l1.worstBlock).toMatch(/^layers\[1\]/);
    // The sweep proves it is not round-off: the best error over h = 1e-2 … 1e-10 stays large.
    expect(r.sweep.map((s) => s.h)).toEqual(SWEEP_STEPS);
    expect(r.bestOverSweep.maxRelError).toBeGreaterThan(1e-2);
  });

  it('on a correct network the sweep shows truncation at large h and round-off at tiny h', () => {
    const { net, w } = tinyNet('softplus', 'mse', 6);
    const r = auditGradient(net, w);
    const err = (h: number) => r.sweep.find((s) => s.h === h)!.maxRelError;
    // common practice: error falls like h² from 1e-2 towards 1e-5, then grows again as
    // round-off (≈ ε·|f|/h) takes over below 1e-7 (CHECKS.md).
    expect(err(1e-2)).toBeGreaterThan(err(1e-4));
    expect(err(1e-10)).toBeGreaterThan(err(1e-5));
    expect(r.bestOverSweep.maxRelError).toBeLessThan(1e-7);
  });

  it('checks a stratified seeded subset when P exceeds the sample, and says so', () => {
    const { net, w } = tinyNet('gelu', 'mse', 2);
    const a = auditGradient(net, w, { sample: 20, rng: Rng.fromSeed(1) });
    const b = auditGradient(net, w, { sample: 20, rng: Rng.fromSeed(1) });
    expect(a.sampled).toBe(true);
    expect(a.checked).toBeLessThan(net.parameterCount);
    expect(a.layers.every((l) => l.checked >= 3)).toBe(true);
    expect(a.entries.map((e) => e.index)).toEqual(b.entries.map((e) => e.index));
    expect(() => auditGradient(net, w, { sample: 20 })).toThrow(/seeded generator/);
  });

  it('reports relative errors, medians and worst entries that a recomputation in the test reproduces', () => {
    // source: the definition |a − n| / max(|a|, |n|, 1e-8·max(1, |f|)) with n the central difference
    // (f(w + h·e_i) − f(w − h·e_i)) / 2h, h_i = 1e-5·max(1, |w_i|) — recomputed here from objective values.
    const { net, w } = tinyNet('tanh', 'mse', 3, 0, { activationOf: (l) => (l === 1 ? brokenTanh : undefined) });
    const r = auditGradient(net, w);
    const g = new Float64Array(net.parameterCount);
    const f = net.gradient(w, g);
    const floor = 1e-8 * Math.max(1, Math.abs(f));
    const rel = Array.from({ length: net.parameterCount }, (_, i) => {
      const h = 1e-5 * Math.max(1, Math.abs(w[i]));
      const x = Float64Array.from(w);
      x[i] = w[i] + h;
      const fp = net.value(x);
      x[i] = w[i] - h;
      const n = (fp - net.value(x)) / (2 * h);
      return Math.abs(g[i] - n) / Math.max(Math.abs(g[i]), Math.abs(n), floor);
    });
    expect(r.entries).toHaveLength(net.parameterCount);
    r.entries.forEach((e, i) => expect(e.relError).toBe(rel[i]));
    expect(r.layers).toHaveLength(3);
    for (const l of r.layers) {
      const idx = net.blocks.filter((b) => b.layer === l.layer).flatMap((b) => Array.from({ length: b.size }, (_, k) => b.offset + k));
      const errs = idx.map((i) => rel[i]).sort((a, b) => a - b);
      const m = errs.length >> 1;
      expect(l.maxRelError).toBe(errs[errs.length - 1]);
      expect(l.medianRelError).toBe(errs.length % 2 ? errs[m] : 0.5 * (errs[m - 1] + errs[m]));
      // the worst entry's position is given inside its block: row and column of the [out, in] weight
      const block = net.blocks.find((b) => b.name === l.worstBlock)!;
      const local = l.worstIndex - block.offset;
      expect(l.worstAt).toEqual(block.kind === 'weight' ? [Math.floor(local / block.shape[1]), local % block.shape[1]] : [local]);
      expect(rel[l.worstIndex]).toBe(l.maxRelError);
    }
  });

  it('refuses to audit a diverged model instead of reporting impossible errors', () => {
    const { net, w } = tinyNet('tanh', 'mse', 3);
    const nan = Float64Array.from(w);
    nan[0] = NaN;
    expect(() => auditGradient(net, nan)).toThrow(AuditDivergedError);
    expect(() => auditGradient(net, nan)).toThrow(/^cannot audit: the model has diverged \(the loss is NaN/);
    // huge but finite weights: the loss overflows the range where central differences mean anything
    const huge = Float64Array.from(w, (x) => x * 1e60);
    expect(() => auditGradient(net, huge)).toThrow(/cannot audit: the model has diverged/);
  });
});
