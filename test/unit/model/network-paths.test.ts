/**
 * The network through its two kernel paths and its kept pass: WebAssembly SIMD and plain
 * JavaScript give identical bits for every activation and loss (value, gradient, Hessian and
 * Gauss-Newton products, full and mini-batches); a run of Hessian products at fixed weights
 * reuses one forward pass and gives the bits a fresh pass gives.
 */
import { ACTIVATIONS, activation, type Activation } from '../../../src/core/model/activations';
import { LOSSES } from '../../../src/core/model/losses';
import { Rng } from '../../../src/core/rng';
import { tinyNet } from './fixtures';
import { Network } from '../../../src/core/model/network';
import { SPARSE_ZERO_SHARE } from '../../../src/core/model/kernels-wasm';

const cases = ACTIVATIONS.flatMap((a) => LOSSES.map((l) => [a, l] as const));

/** Same bits (the two paths must add the same products in the same order). */
const sameBits = (a: Float64Array, b: Float64Array): boolean => a.length === b.length && a.every((x, i) => Object.is(x, b[i]));

describe('SIMD and scalar kernels give the same network bits', () => {
  it(`cover ${cases.length} activation × loss pairs`, () => {
    expect(cases.length).toBe(ACTIVATIONS.length * LOSSES.length);
    expect(cases.length).toBeGreaterThanOrEqual(20);
  });

  it.each(cases)('%s / %s', (act, loss) => {
    const a = tinyNet(act, loss, 21, 0.03, { simd: true });
    const b = tinyNet(act, loss, 21, 0.03, { simd: false });
    expect(a.net.kernelKind).toBe('simd');
    expect(b.net.kernelKind).toBe('scalar');
    const P = a.net.parameterCount;
    const v = Rng.fromSeed(5).fillNormal(new Float64Array(P));
    for (const rows of [undefined, Int32Array.from([6, 0, 3, 3, 1])]) expectSameProducts(a, b, v, rows);
  });
});

/**
 * Value, gradient, Hessian product (fresh, then on the kept pass) and Gauss-Newton product of
 * two builds of one network, each required to give the other's bits.
 */
function expectSameProducts(a: { net: Network; w: Float64Array }, b: { net: Network; w: Float64Array }, v: Float64Array, rows?: Int32Array): void {
  const P = a.net.parameterCount;
  expect(Object.is(a.net.value(a.w, rows), b.net.value(b.w, rows))).toBe(true);
  const ga = new Float64Array(P), gb = new Float64Array(P);
  expect(Object.is(a.net.gradient(a.w, ga, rows), b.net.gradient(b.w, gb, rows))).toBe(true);
  expect(sameBits(ga, gb)).toBe(true);
  for (let k = 0; k < 2; k++) {
    a.net.hvp(a.w, v, ga, rows);
    b.net.hvp(b.w, v, gb, rows);
    expect(sameBits(ga, gb)).toBe(true);
  }
  a.net.gnvp(a.w, v, ga, rows);
  b.net.gnvp(b.w, v, gb, rows);
  expect(sameBits(ga, gb)).toBe(true);
}

describe('the sparse kernels inside a ReLU network give the bits of the plain loops', () => {
  // Layers at least one sixteen-column panel wide and more rows than one 256-row chunk, so the
  // products whose coefficients are ReLU outputs or errors take the sparse path.
  const build = (simd: boolean): { net: Network; w: Float64Array } => {
    const rng = Rng.fromSeed(41);
    const N = 300, D = 20, K = 3;
    const x = rng.fillNormal(new Float64Array(N * D));
    const y = Float64Array.from({ length: N }, () => rng.int(K));
    const model = { kind: 'network' as const, inputs: D, layers: [{ units: 24, activation: 'relu' as const }, { units: 32, activation: 'relu' as const }, { units: K, activation: 'linear' as const }], init: 'lecun-normal' as const, gain: 1 };
    const net = new Network(model, { rows: N, inputs: D, targets: 1, x, y }, 'cross-entropy', 0.01, { simd });
    return { net, w: rng.fillNormal(new Float64Array(net.parameterCount)) };
  };

  it('value, gradient, Hessian and Gauss-Newton products, full batch and a mini-batch', () => {
    const a = build(true);
    const b = build(false);
    expect(a.net.kernelKind).toBe('simd');
    const P = a.net.parameterCount;
    // The hidden layers' outputs hold enough exact zeros for the sparse path.
    let zeros = 0, count = 0;
    a.net.inspectLayers(a.w, Int32Array.from({ length: 300 }, (_, i) => i), (layer, _pre, post) => {
      if (layer === 2) return;
      count += post.length;
      for (const f of post) if (f === 0) zeros++;
    });
    expect(zeros / count).toBeGreaterThan(SPARSE_ZERO_SHARE);
    const v = Rng.fromSeed(6).fillNormal(new Float64Array(P));
    for (const rows of [undefined, Int32Array.from({ length: 270 }, (_, i) => (i * 7) % 300)]) expectSameProducts(a, b, v, rows);
  });
});

/** An activation that counts its evaluations (one per layer and forward pass). */
function counting(name: 'tanh' | 'relu', counter: { evals: number }): Activation {
  const inner = activation(name);
  return { ...inner, evaluate: (a, f, d1, d2, n) => { counter.evals++; inner.evaluate(a, f, d1, d2, n); } };
}

describe('Hessian products at fixed weights keep the forward pass', () => {
  it.each([true, false])('reuse it and give a fresh pass’s bits (simd: %s)', (simd) => {
    const counter = { evals: 0 };
    const { net, w } = tinyNet('tanh', 'cross-entropy', 3, 0.01, { simd, activationOf: () => counting('tanh', counter) });
    const fresh = tinyNet('tanh', 'cross-entropy', 3, 0.01, { simd, activationOf: () => counting('tanh', { evals: 0 }) });
    const P = net.parameterCount;
    const rng = Rng.fromSeed(8);
    const out = new Float64Array(P), ref = new Float64Array(P), g = new Float64Array(P);
    for (let k = 0; k < 5; k++) {
      const v = rng.fillNormal(new Float64Array(P));
      net.hvp(w, v, out);
      fresh.net.gradient(fresh.w, g); // a different evaluation in between: no pass is kept
      fresh.net.hvp(fresh.w, v, ref);
      expect(sameBits(out, ref)).toBe(true);
    }
    // the network has three layers (two hidden of tanh, the output replaced too): one pass
    expect(counter.evals).toBe(3);
  });

  it('run a fresh pass after any other evaluation, for other rows, or for weights that differ in one bit', () => {
    const counter = { evals: 0 };
    const { net, w } = tinyNet('relu', 'mse', 4, 0, { activationOf: () => counting('relu', counter) });
    const P = net.parameterCount;
    const v = Rng.fromSeed(2).fillNormal(new Float64Array(P));
    const out = new Float64Array(P);
    net.hvp(w, v, out);
    expect(counter.evals).toBe(3);
    net.value(w);
    net.hvp(w, v, out);
    expect(counter.evals).toBe(9);
    net.hvp(w, v, out, Int32Array.from([1, 2]));
    expect(counter.evals).toBe(12);
    net.hvp(w, v, out, Int32Array.from([1, 3]));
    expect(counter.evals).toBe(15);
    const w2 = w.slice();
    w2[0] = 0;
    net.hvp(w2, v, out);
    w2[0] = -0;
    net.hvp(w2, v, out);
    expect(counter.evals).toBe(21);
    net.gnvp(w2, v, out);
    net.gnvp(w2, v, out);
    expect(counter.evals).toBe(21);
    // gnvp overwrote δh: the next Hessian product needs its own pass
    net.hvp(w2, v, out);
    expect(counter.evals).toBe(24);
  });

  it('a row index out of range leaves no stale kept pass behind', () => {
    const { net, w } = tinyNet('tanh', 'mse', 6, 0);
    const P = net.parameterCount;
    const v = Rng.fromSeed(3).fillNormal(new Float64Array(P));
    const rows = Int32Array.from([0, 1, 2]);
    const a = new Float64Array(P), b = new Float64Array(P);
    net.hvp(w, v, a, rows);
    expect(() => net.value(w, Int32Array.from([5, 4, 99]))).toThrow('row index 99 outside 0..6');
    net.hvp(w, v, b, rows);
    expect(sameBits(a, b)).toBe(true);
  });
});
