import { initNetwork, initVariance, orthogonalMatrix } from '../../../src/core/model/init';
import { Rng } from '../../../src/core/rng';
import type { InitScheme, NetworkModel } from '../../../src/core/setup';

const fanIn = 300, fanOut = 200; // 60 000 draws per scheme
const model = (init: InitScheme, gain = 1): NetworkModel => ({ kind: 'network', inputs: fanIn, layers: [{ units: fanOut, activation: 'tanh' }], init, gain });

function moments(w: Float64Array, n: number): { mean: number; variance: number } {
  let s = 0; for (let i = 0; i < n; i++) s += w[i];
  const mean = s / n;
  let v = 0; for (let i = 0; i < n; i++) v += (w[i] - mean) ** 2;
  return { mean, variance: v / (n - 1) };
}

describe('initialization variances', () => {
  // source: LeCun et al. 1998 (1/fan_in); Glorot & Bengio 2010 (2/(fan_in + fan_out)); He et al. 2015 (2/fan_in)
  const expected: [Exclude<InitScheme, 'orthogonal'>, number][] = [
    ['lecun-normal', 1 / fanIn], ['lecun-uniform', 1 / fanIn],
    ['glorot-normal', 2 / (fanIn + fanOut)], ['glorot-uniform', 2 / (fanIn + fanOut)],
    ['he-normal', 2 / fanIn], ['he-uniform', 2 / fanIn],
  ];
  it.each(expected)('%s has variance %p', (scheme, variance) => {
    expect(initVariance(scheme, fanIn, fanOut)).toBeCloseTo(variance, 15);
    const gain = 1.5;
    const w = initNetwork(model(scheme, gain), Rng.fromSeed(7));
    const n = fanIn * fanOut;
    const m = moments(w, n);
    const target = gain * gain * variance;
    // Test: sample variance within 4 standard errors. common practice (no single source):
    // the sample variance's standard error is σ²·√(2/(n−1)) for a normal and σ²·√(0.8/n)
    // for a uniform (fourth moment 9σ⁴/5); the mean's is σ/√n.
    const se = target * Math.sqrt(scheme.endsWith('uniform') ? 0.8 / n : 2 / (n - 1));
    expect(Math.abs(m.variance - target)).toBeLessThan(4 * se);
    expect(Math.abs(m.mean)).toBeLessThan(4 * Math.sqrt(target / n));
    if (scheme.endsWith('uniform')) {
      // source: Glorot & Bengio 2010: U(−b, b) with b = √(6/(fan_in + fan_out)) has variance b²/3.
      const b = Math.sqrt(3 * target);
      expect(Math.max(...w.subarray(0, n).map(Math.abs))).toBeLessThanOrEqual(b);
    }
    // biases start at zero (common practice)
    expect(Array.from(w.subarray(n))).toEqual(new Array(fanOut).fill(0));
  });

  it('pre-activations of unit-variance inputs keep unit variance under lecun-normal', () => {
    const rng = Rng.fromSeed(3);
    const w = initNetwork(model('lecun-normal'), Rng.fromSeed(8));
    const x = rng.fillNormal(new Float64Array(fanIn));
    const a = new Float64Array(fanOut);
    for (let o = 0; o < fanOut; o++) { let s = 0; for (let i = 0; i < fanIn; i++) s += w[o * fanIn + i] * x[i]; a[o] = s; }
    // common practice: a sum of n independent zero-mean terms of variance s² has sd s·√n,
    // here s² = 1/fan_in, n = fan_in, so Var(a) ≈ 1 (chi-square spread over 200 units: ±0.4).
    expect(Math.abs(moments(a, fanOut).variance - 1)).toBeLessThan(0.4);
  });

  it.each([[3, 5], [5, 3], [4, 4], [1, 6]])('orthogonal %i×%i has orthonormal rows or columns', (rows, cols) => {
    const q = new Float64Array(rows * cols);
    orthogonalMatrix(rows, cols, Rng.fromSeed(1), q);
    const k = Math.min(rows, cols);
    for (let a = 0; a < k; a++) for (let b = 0; b < k; b++) {
      let s = 0;
      for (let t = 0; t < Math.max(rows, cols); t++) s += rows <= cols ? q[a * cols + t] * q[b * cols + t] : q[t * cols + a] * q[t * cols + b];
      // source: Saxe et al., ICLR 2014 (orthogonal init): QQᵀ = I (or QᵀQ = I), to round-off.
      expect(s).toBeCloseTo(a === b ? 1 : 0, 12);
    }
  });

  it('explicit weights override the scheme and keep the [out, in] row-major layout', () => {
    const m: NetworkModel = { kind: 'network', inputs: 2, layers: [{ units: 2, activation: 'tanh' }], init: 'he-normal', gain: 1, weights: [{ weight: [[1, 2], [3, 4]], bias: [5, 6] }] };
    expect(Array.from(initNetwork(m, Rng.fromSeed(0)))).toEqual([1, 2, 3, 4, 5, 6]);
  });

  it('the same seed draws the same weights and another seed different ones', () => {
    const a = initNetwork(model('glorot-uniform'), Rng.fromSeed(42));
    const b = initNetwork(model('glorot-uniform'), Rng.fromSeed(42));
    const c = initNetwork(model('glorot-uniform'), Rng.fromSeed(43));
    expect(Buffer.from(a.buffer).equals(Buffer.from(b.buffer))).toBe(true);
    expect(Buffer.from(a.buffer).equals(Buffer.from(c.buffer))).toBe(false);
  });
});
