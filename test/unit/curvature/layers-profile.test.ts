import type { Objective, ParamBlock } from '../../../src/core/objective';
import { layerSharpness, lineProfile } from '../../../src/core/probe/curvature';
import { Rng } from '../../../src/core/rng';
import { mul, quadraticWithSpectrum } from './helpers';

/** f(w) = ½wᵀAw with A given and a two-layer block layout over its coordinates. */
function twoLayerQuadratic(a: Float64Array, n: number, split: number): Objective {
  const blocks: ParamBlock[] = [
    { name: 'layers[0].weight', layer: 0, kind: 'weight', offset: 0, size: split - 1, shape: [split - 1] },
    { name: 'layers[0].bias', layer: 0, kind: 'bias', offset: split - 1, size: 1, shape: [1] },
    { name: 'layers[1].weight', layer: 1, kind: 'weight', offset: split, size: n - split, shape: [n - split] },
  ];
  const value = (w: Float64Array): number => {
    const aw = mul(a, w);
    let s = 0;
    for (let i = 0; i < n; i++) s += w[i] * aw[i];
    return 0.5 * s;
  };
  const prod = (_w: Float64Array, v: Float64Array, out: Float64Array): void => out.set(mul(a, v));
  return {
    parameterCount: n,
    blocks,
    rowCount: 0,
    value,
    gradient: (w, out) => {
      out.set(mul(a, w));
      return value(w);
    },
    hvp: prod,
    gnvp: prod,
  };
}

describe('layerSharpness', () => {
  it('returns λmax of each diagonal block (block-diagonal A: the blocks’ own spectra)', () => {
    // source: closed form — a block-diagonal matrix's diagonal blocks are Q_b·diag(λ_b)·Q_bᵀ.
    const b0 = quadraticWithSpectrum([5, 1, 0.5, -2], 1);
    const b1 = quadraticWithSpectrum([9, 3, -1], 2);
    const n = 7;
    const a = new Float64Array(n * n);
    for (let i = 0; i < 4; i++) for (let j = 0; j < 4; j++) a[i * n + j] = b0.a[i * 4 + j];
    for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) a[(4 + i) * n + 4 + j] = b1.a[i * 3 + j];
    // couple the blocks off-diagonally: the block λmax must ignore the coupling
    for (let i = 0; i < 4; i++) for (let j = 4; j < 7; j++) {
      a[i * n + j] = 0.3;
      a[j * n + i] = 0.3;
    }
    const obj = twoLayerQuadratic(a, n, 4);
    const seen: number[] = [];
    const layers = layerSharpness(obj, new Float64Array(n), Rng.fromSeed(1), { tol: 1e-12, onProgress: (p) => void seen.push(p.done) });
    expect(layers.map((l) => l.layer)).toEqual([0, 1]);
    expect(layers[0].blocks).toEqual(['layers[0].weight', 'layers[0].bias']);
    expect(layers[0].size).toBe(4);
    expect(layers[0].lambdaMax).toBeCloseTo(5, 11);
    expect(layers[1].lambdaMax).toBeCloseTo(9, 11);
    expect(layers[1].stableLr).toBeCloseTo(2 / 9, 11);
    expect(seen).toEqual([1, 2]);
  });

  it('groups non-network blocks one by one', () => {
    const q = quadraticWithSpectrum([4, 2, 1], 3);
    const layers = layerSharpness(q.objective, new Float64Array(3), Rng.fromSeed(2));
    expect(layers).toHaveLength(1);
    expect(layers[0].layer).toBe(-1);
    expect(layers[0].lambdaMax).toBeCloseTo(4, 9);
  });
});

describe('lineProfile', () => {
  it('on a quadratic the loss along the top eigenvector equals its quadratic model exactly', () => {
    // source: closed form — f(w + t·u) = f(w) + t·gᵀu + ½t²·uᵀAu for f = ½wᵀAw, and uᵀAu = λ for an eigenvector.
    const q = quadraticWithSpectrum([6, 2, 1, 0.5], 4);
    const w = Float64Array.from([0.3, -0.2, 0.5, 1]);
    // top eigenvector (A·u = 6u) by power iteration on A + 2I (ratio 4/8 per step)
    const u = Float64Array.from([1, 0, 0, 0]);
    for (let it = 0; it < 200; it++) {
      const y = mul(q.a, u);
      let s = 0;
      for (let i = 0; i < 4; i++) {
        y[i] += 2 * u[i];
        s += y[i] * y[i];
      }
      for (let i = 0; i < 4; i++) u[i] = y[i] / Math.sqrt(s);
    }
    const p = lineProfile(q.objective, w, Float64Array.from(u, (x) => 3 * x), { from: -2, to: 2, points: 9 });
    expect(Array.from(p.t)).toEqual([-2, -1.5, -1, -0.5, 0, 0.5, 1, 1.5, 2]);
    expect(p.curvature).toBeCloseTo(6, 10);
    p.loss.forEach((x, i) => expect(x).toBeCloseTo(p.quadratic[i], 12));
    expect(p.loss[4]).toBeCloseTo(q.objective.value(w), 14);
    let nrm = 0;
    for (const x of p.direction) nrm += x * x;
    expect(nrm).toBeCloseTo(1, 14); // the direction is normalized
  });

  it('rejects a zero direction with an exact message', () => {
    const q = quadraticWithSpectrum([1, 2], 5);
    expect(() => lineProfile(q.objective, new Float64Array(2), new Float64Array(2))).toThrow('direction must be non-zero and finite');
  });
});
