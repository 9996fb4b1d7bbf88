/**
 * Curvature products skip what a direction's zero blocks make exactly zero
 * (`NetworkOptions.skipZeroBlocks`): the R-forward pass below the first layer the direction
 * touches, and the terms of every layer it does not. The products must be the same numbers as
 * with every term computed — adding an exact zero changes no sum (IEEE 754-2019 §6.3: x + (±0)
 * = x for x ≠ 0), so equality up to the sign of an exact zero (compared with ===) is the check.
 */
import { Network } from '../../../src/core/model/network';
import { Rng } from '../../../src/core/rng';
import { denseHessian } from '../../../src/core/probe/curvature/dense';

type Act = 'tanh' | 'relu' | 'sigmoid' | 'linear';

function nets(acts: Act[], simd: boolean, loss: 'cross-entropy' | 'mse' = 'cross-entropy'): { on: Network; off: Network; w: Float64Array } {
  const rng = Rng.fromSeed(acts.length * 7 + (simd ? 1 : 0));
  const rows = 23;
  const inputs = 5;
  const x = rng.fillNormal(new Float64Array(rows * inputs));
  const out = loss === 'mse' ? 2 : 3;
  const y = loss === 'mse' ? rng.fillNormal(new Float64Array(rows * out)) : Float64Array.from({ length: rows }, () => rng.int(out));
  const layers = [...acts.map((activation, i) => ({ units: 6 + 2 * i, activation })), { units: out, activation: 'linear' as const }];
  const model = { kind: 'network' as const, inputs, layers, init: 'lecun-normal' as const, gain: 1 };
  const data = { rows, inputs, targets: loss === 'mse' ? out : 1, x, y };
  const on = new Network(model, data, loss, 0.01, { simd });
  const off = new Network(model, data, loss, 0.01, { simd, skipZeroBlocks: false });
  return { on, off, w: rng.fillNormal(new Float64Array(on.parameterCount)) };
}

/** Directions: random, zero on every subset of layer blocks, and unit vectors in each block. */
function directions(net: Network, rng: Rng): Float64Array[] {
  const P = net.parameterCount;
  const layers = net.blocks.length / 2;
  const out: Float64Array[] = [];
  for (let mask = 0; mask < 1 << layers; mask++) {
    const v = rng.fillNormal(new Float64Array(P));
    for (const b of net.blocks) if (mask & (1 << b.layer)) v.fill(0, b.offset, b.offset + b.size);
    out.push(v);
  }
  for (const b of net.blocks) {
    for (const at of [b.offset, b.offset + b.size - 1]) {
      const e = new Float64Array(P);
      e[at] = 1;
      out.push(e);
    }
  }
  return out;
}

const same = (a: Float64Array, b: Float64Array): boolean => a.length === b.length && a.every((x, i) => x === b[i]);

describe('curvature products with zero blocks skipped', () => {
  const cases: Array<[string, Act[], 'cross-entropy' | 'mse']> = [
    ['one tanh layer, cross-entropy', ['tanh'], 'cross-entropy'],
    ['two layers, relu then sigmoid, mse', ['relu', 'sigmoid'], 'mse'],
    ['three layers, tanh, relu, linear, cross-entropy', ['tanh', 'relu', 'linear'], 'cross-entropy'],
  ];
  for (const simd of [false, true]) {
    for (const [name, acts, loss] of cases) {
      it(`gives the products of the full computation: ${name} (${simd ? 'SIMD' : 'scalar'} kernels)`, () => {
        const { on, off, w } = nets(acts, simd, loss);
        const rng = Rng.fromSeed(5);
        const P = on.parameterCount;
        const a = new Float64Array(P);
        const b = new Float64Array(P);
        let checked = 0;
        for (const v of directions(on, rng)) {
          on.hvp(w, v, a);
          off.hvp(w, v, b);
          expect(same(a, b)).toBe(true);
          on.gnvp(w, v, a);
          off.gnvp(w, v, b);
          expect(same(a, b)).toBe(true);
          checked++;
        }
        // every product nonzero somewhere: the check compares numbers, not zeros
        on.hvp(w, directions(on, rng)[0], a);
        expect(a.some((x) => x !== 0)).toBe(true);
        expect(checked).toBe((1 << acts.length + 1) + 2 * on.blocks.length);
      });
    }
  }

  it('keeps the kept pass usable: products of alternating zero-block and full directions agree with fresh ones', () => {
    const { on, off, w } = nets(['tanh', 'relu'], true);
    const rng = Rng.fromSeed(9);
    const dirs = directions(on, rng);
    const a = new Float64Array(on.parameterCount);
    const b = new Float64Array(on.parameterCount);
    for (let k = 0; k < 3; k++) {
      for (const v of [...dirs].reverse()) {
        on.hvp(w, v, a);
        off.hvp(w, v, b);
        expect(same(a, b)).toBe(true);
      }
    }
  });

  it('builds the same dense Hessian and Gauss-Newton matrix', () => {
    const { on, off, w } = nets(['tanh', 'relu'], true);
    for (const kind of ['hessian', 'gauss-newton'] as const) {
      const a = denseHessian(on, w, undefined, kind);
      const b = denseHessian(off, w, undefined, kind);
      expect(same(a.matrix, b.matrix)).toBe(true);
      expect(a.asymmetry).toBe(b.asymmetry);
    }
  });
});
