import { parseSpec } from '../../../src/experiment';
import { patchExperiment } from '../../../src/experiment/patch';
import { standardizeData } from '../../../src/core/data/standardize';

// An invented kiln log: furnace temperature (°C), door-open count (constant 3 here), humidity share.
const KILN = `seed: 4
model:
  inputs: 3
  layers: [{ units: 4, activation: tanh }, { units: 1 }]
data:
  x: [[810, 3, 0.2], [830, 3, 0.4], [850, 3, 0.6], [870, 3, 0.8]]
  y: [1.0, 1.5, 1.9, 2.6]
  heldOut:
    x: [[840, 5, 0.5]]
    y: [1.7]
`;

describe('data.standardize', () => {
  it('is off by default and leaves the inputs untouched', () => {
    const r = parseSpec(KILN);
    if (!r.ok) throw new Error(JSON.stringify(r.errors));
    expect(r.experiment.setup.data?.standardized).toBeUndefined();
    expect(Array.from(r.experiment.setup.data!.x.slice(0, 3))).toEqual([810, 3, 0.2]);
  });

  it('standardizes with the training mean and population spread, records them, and applies them to held-out rows', () => {
    const r = parseSpec(KILN.replace('  heldOut:', '  standardize: true\n  heldOut:'));
    if (!r.ok) throw new Error(JSON.stringify(r.errors));
    const d = r.experiment.setup.data!;
    // source: closed form — column [810, 830, 850, 870] has mean 840 and population variance (30² + 10² + 10² + 30²)/4 = 500.
    const s0 = Math.sqrt(500);
    // source: closed form — column [0.2, 0.4, 0.6, 0.8] has mean 0.5 and population variance (0.09 + 0.01 + 0.01 + 0.09)/4 = 0.05.
    const s2 = Math.sqrt(0.05);
    expect(d.standardized!.mean[0]).toBeCloseTo(840, 12);
    expect(d.standardized!.spread[0]).toBeCloseTo(s0, 12);
    expect(d.standardized!.mean[2]).toBeCloseTo(0.5, 14);
    expect(d.standardized!.spread[2]).toBeCloseTo(s2, 14);
    // The constant column (door openings, always 3) is centred but not divided: spread 0, values 0.
    expect(d.standardized!.constant).toEqual([1]);
    expect(d.standardized!.spread[1]).toBe(0);
    expect(d.standardized!.mean[1]).toBe(3);
    const col = (j: number) => [0, 1, 2, 3].map((r) => d.x[r * 3 + j]);
    expect(col(1)).toEqual([0, 0, 0, 0]);
    expect(col(0)[0]).toBeCloseTo(-30 / s0, 12);
    expect(col(2)[3]).toBeCloseTo(0.3 / s2, 12);
    // Held-out rows use the training numbers, including the constant column's centre (5 − 3 = 2).
    const h = d.heldOut!.x;
    expect(h[0]).toBeCloseTo(0, 12);
    expect(h[1]).toBe(2);
    expect(h[2]).toBeCloseTo(0, 12);
    // Targets are not touched.
    expect(Array.from(d.y)).toEqual([1.0, 1.5, 1.9, 2.6]);
  });

  it('is a setup change a patch can make (data.standardize=true)', () => {
    const r = patchExperiment(KILN, { 'data.standardize': true });
    if (!r.ok) throw new Error(JSON.stringify(r.errors));
    expect(r.experiment.setup.data!.standardized!.constant).toEqual([1]);
    const bad = patchExperiment(KILN, { 'data.standardize': 'yes' });
    expect(bad.ok).toBe(false);
    if (!bad.ok) expect(bad.errors[0].message).toMatch(/patch 'data.standardize'/);
  });

  it('standardizing twice changes nothing', () => {
    const r = parseSpec(KILN.replace('  heldOut:', '  standardize: true\n  heldOut:'));
    if (!r.ok) throw new Error('spec');
    const d = r.experiment.setup.data!;
    expect(standardizeData(d)).toBe(d);
  });
});
