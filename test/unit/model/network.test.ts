import { ACTIVATIONS } from '../../../src/core/model/activations';
import { LOSSES } from '../../../src/core/model/losses';
import { Network } from '../../../src/core/model/network';
import { Rng } from '../../../src/core/rng';
import { dot } from '../../../src/core/objective';
import { relDiff, tinyNet } from './fixtures';

const cases = ACTIVATIONS.flatMap((a) => LOSSES.map((l) => [a, l] as const));

describe('network objective: gradient and R-operator against central differences', () => {
  it.each(cases)('%s hidden units with %s loss', (act, loss) => {
    const { net, w, rng } = tinyNet(act, loss);
    const P = net.parameterCount;
    const g = new Float64Array(P);
    const f = net.gradient(w, g);
    expect(f).toBeCloseTo(net.value(w), 14);
    // common practice (no single source): central differences with h = 1e-5 have truncation
    // error O(h²) ≈ 1e-10 relative in float64; 1e-6 leaves room for round-off.
    const fd = new Float64Array(P);
    const h = 1e-5;
    for (let i = 0; i < P; i++) {
      const wp = w.slice(); wp[i] += h;
      const wm = w.slice(); wm[i] -= h;
      fd[i] = (net.value(wp) - net.value(wm)) / (2 * h);
    }
    expect(relDiff(g, fd)).toBeLessThan(1e-6);

    const v = rng.fillNormal(new Float64Array(P));
    const hv = new Float64Array(P);
    net.hvp(w, v, hv);
    const gp = new Float64Array(P), gm = new Float64Array(P);
    const wp = w.slice(), wm = w.slice();
    for (let i = 0; i < P; i++) { wp[i] += h * v[i]; wm[i] -= h * v[i]; }
    net.gradient(wp, gp);
    net.gradient(wm, gm);
    const fdHv = gp.map((x, i) => (x - gm[i]) / (2 * h));
    // common practice: the directional difference of gradients approximates H·v to O(h²).
    expect(relDiff(hv, fdHv)).toBeLessThan(1e-6);
  });
});

describe('network objective: invariants', () => {
  it.each(cases)('Hessian products are symmetric (uᵀHv = vᵀHu) for %s / %s', (act, loss) => {
    const { net, w, rng } = tinyNet(act, loss, 5);
    const P = net.parameterCount;
    const u = rng.fillNormal(new Float64Array(P)), v = rng.fillNormal(new Float64Array(P));
    const hu = new Float64Array(P), hv = new Float64Array(P);
    net.hvp(w, u, hu);
    net.hvp(w, v, hv);
    // common practice: a twice continuously differentiable f has a symmetric Hessian (Schwarz);
    // the exact R-operator keeps this to round-off.
    expect(Math.abs(dot(u, hv) - dot(v, hu))).toBeLessThan(1e-10 * (Math.abs(dot(u, hv)) + 1));
  });

  it.each(LOSSES)('the Gauss-Newton matrix is positive semi-definite for %s (convex loss in the outputs)', (loss) => {
    const { net, w, rng } = tinyNet('tanh', loss, 9, 0);
    const P = net.parameterCount;
    const out = new Float64Array(P);
    for (let k = 0; k < 20; k++) {
      const v = rng.fillNormal(new Float64Array(P));
      net.gnvp(w, v, out);
      // common practice (Schraudolph 2002): G = Jᵀ H_out J with H_out ⪰ 0 gives vᵀGv ≥ 0.
      expect(dot(v, out)).toBeGreaterThanOrEqual(-1e-12);
    }
  });

  it('for a model linear in its weights (one linear layer) with mse, Gauss-Newton equals the Hessian', () => {
    const rng = Rng.fromSeed(4);
    // common practice: H = JᵀH_outJ + Σ_i (∂ℓ/∂ŷ_i)·∇²ŷ_i, and ∇²ŷ = 0 when ŷ is linear in w.
    const single = new Network(
      { kind: 'network', inputs: 3, layers: [{ units: 2, activation: 'linear' }], init: 'lecun-normal', gain: 1 },
      { rows: 4, inputs: 3, targets: 2, x: rng.fillNormal(new Float64Array(12)), y: rng.fillNormal(new Float64Array(8)) },
      'mse',
      0.1,
    );
    const w1 = rng.fillNormal(new Float64Array(8)), v1 = rng.fillNormal(new Float64Array(8));
    const h1 = new Float64Array(8), g1 = new Float64Array(8);
    single.hvp(w1, v1, h1);
    single.gnvp(w1, v1, g1);
    expect(relDiff(g1, h1)).toBeLessThan(1e-14);
  });

  it('least squares on one linear layer: gradient and Hessian match the normal equations', () => {
    const rng = Rng.fromSeed(21);
    const n = 6, d = 3;
    const x = rng.fillNormal(new Float64Array(n * d)), y = rng.fillNormal(new Float64Array(n));
    const net = new Network({ kind: 'network', inputs: d, layers: [{ units: 1, activation: 'linear' }], init: 'lecun-normal', gain: 1 }, { rows: n, inputs: d, targets: 1, x, y }, 'mse', 0);
    const w = rng.fillNormal(new Float64Array(d + 1));
    const g = new Float64Array(d + 1);
    net.gradient(w, g);
    // common practice: for f = (1/n)‖Xa·w − y‖² (Xa = [X, 1]), ∇f = (2/n) Xaᵀ(Xa·w − y) and H = (2/n) XaᵀXa.
    const r = new Float64Array(n);
    for (let i = 0; i < n; i++) { let s = w[d]; for (let j = 0; j < d; j++) s += x[i * d + j] * w[j]; r[i] = s - y[i]; }
    const expected = new Float64Array(d + 1);
    for (let j = 0; j <= d; j++) for (let i = 0; i < n; i++) expected[j] += (2 / n) * (j < d ? x[i * d + j] : 1) * r[i];
    expect(relDiff(g, expected)).toBeLessThan(1e-14);
    const e0 = new Float64Array(d + 1); e0[0] = 1;
    const col = new Float64Array(d + 1);
    net.hvp(w, e0, col);
    for (let j = 0; j <= d; j++) {
      let s = 0;
      for (let i = 0; i < n; i++) s += (2 / n) * (j < d ? x[i * d + j] : 1) * x[i * d];
      expect(col[j]).toBeCloseTo(s, 13);
    }
  });

  it('a mini-batch gradient equals the gradient of a network over just those rows', () => {
    const { net, w } = tinyNet('gelu', 'cross-entropy', 8);
    const rows = Int32Array.from([5, 1, 3]);
    const g = new Float64Array(net.parameterCount);
    const f = net.gradient(w, g, rows);
    // Rebuild from the same seed to reach the data, then select the rows by hand.
    const again = tinyNet('gelu', 'cross-entropy', 8);
    const full = again.net as unknown as { x: Float64Array; y: Float64Array };
    const x = new Float64Array(9), y = new Float64Array(3);
    rows.forEach((r, i) => { for (let j = 0; j < 3; j++) x[i * 3 + j] = full.x[r * 3 + j]; y[i] = full.y[r]; });
    const sub = new Network(
      { kind: 'network', inputs: 3, layers: [{ units: 4, activation: 'gelu' }, { units: 5, activation: 'gelu' }, { units: 3, activation: 'linear' }], init: 'lecun-normal', gain: 1 },
      { rows: 3, inputs: 3, targets: 1, x, y }, 'cross-entropy', 0.05,
    );
    const g2 = new Float64Array(net.parameterCount);
    // common practice: a mean loss over a subset is the same function as the mean over a data set of that subset.
    expect(sub.gradient(w, g2)).toBeCloseTo(f, 14);
    expect(relDiff(g, g2)).toBeLessThan(1e-14);
  });

  it('rejects a batch row outside the data with a message naming the range', () => {
    const { net, w } = tinyNet('tanh', 'mse');
    expect(() => net.value(w, Int32Array.from([0, 7]))).toThrow('row index 7 outside 0..6');
  });
});
