/**
 * Block curvature products (`Network.curvatureBlock`): several directions in one pass, each
 * product of the weights one matrix product over block × rows rows. Each output's sum adds
 * the same terms in the same order as one product at a time, so the reference is `hvp` /
 * `gnvp` itself, compared bit for bit (Object.is: the sign of zero counts) with zero-block
 * skipping off; with it on, equal up to the sign of an exact zero (===), as for the single
 * products (IEEE 754-2019 §6.3: x + (±0) = x for x ≠ 0). Both checks are exact, so no
 * tolerance needs a source; the single products themselves are checked against PyTorch in
 * test/reference.
 */
import { DEFAULT_BLOCK, MAX_BLOCK, Network } from '../../../src/core/model/network';
import { Rng } from '../../../src/core/rng';
import type { ActivationName, LossName } from '../../../src/core/setup';
import type { Objective, Rows } from '../../../src/core/objective';
import { denseHessian } from '../../../src/core/probe/curvature/dense';
import { curvatureOperator } from '../../../src/core/probe/curvature/operator';
import { hutchinsonTrace } from '../../../src/core/linalg/density';
import { withWeightDecay } from '../../../src/core/optim/decayed';

interface Case {
  name: string;
  acts: ActivationName[];
  loss: LossName;
  widths: number[];
}

const CASES: Case[] = [
  { name: 'tanh, cross-entropy', acts: ['tanh'], loss: 'cross-entropy', widths: [6] },
  { name: 'relu then sigmoid, mse', acts: ['relu', 'sigmoid'], loss: 'mse', widths: [7, 5] },
  { name: 'wide relu layers (the sparse kernels), binary cross-entropy', acts: ['relu', 'relu'], loss: 'binary-cross-entropy', widths: [24, 20] },
  { name: 'tanh, linear, gelu, cross-entropy', acts: ['tanh', 'linear', 'gelu'], loss: 'cross-entropy', widths: [9, 4, 6] },
];

function build(c: Case, options: { simd: boolean; skipZeroBlocks?: boolean; blockSize?: number }, rows = 29, inputs = 5): { net: Network; w: Float64Array; rng: Rng } {
  const rng = Rng.fromSeed(c.widths.reduce((s, u) => s * 31 + u, 7));
  const outputs = 3;
  const x = rng.fillNormal(new Float64Array(rows * inputs));
  const width = c.loss === 'cross-entropy' ? 1 : outputs;
  const y = new Float64Array(rows * width);
  for (let i = 0; i < y.length; i++) y[i] = c.loss === 'cross-entropy' ? rng.int(outputs) : c.loss === 'binary-cross-entropy' ? rng.uniform() : rng.normal();
  const layers = [...c.acts.map((activation, i) => ({ units: c.widths[i], activation })), { units: outputs, activation: 'linear' as const }];
  const net = new Network({ kind: 'network', inputs, layers, init: 'lecun-normal', gain: 1 }, { rows, inputs, targets: width, x, y }, c.loss, 0.02, options);
  const w = rng.fillNormal(new Float64Array(net.parameterCount));
  return { net, w, rng };
}

/** Random directions, some with zero layer blocks, and unit vectors: the mix a readout sends. */
function directions(net: Network, rng: Rng, count: number): Float64Array[] {
  const P = net.parameterCount;
  return Array.from({ length: count }, (_, j) => {
    const v = new Float64Array(P);
    if (j % 3 === 2) v[(j * 7919) % P] = 1;
    else {
      rng.fillNormal(v);
      const layers = net.blocks.length / 2;
      if (j % 3 === 1) for (const b of net.blocks) if (b.layer === j % layers) v.fill(0, b.offset, b.offset + b.size);
    }
    return v;
  });
}

const bits = (a: Float64Array, b: Float64Array): boolean => a.length === b.length && a.every((x, i) => Object.is(x, b[i]));
const equal = (a: Float64Array, b: Float64Array): boolean => a.length === b.length && a.every((x, i) => x === b[i]);

/** The indices j where `outs[j]` is not `single`'s product with `vs[j]` alone (compared by `same`). */
function mismatches(single: Objective, kind: 'hessian' | 'gauss-newton', w: Float64Array, vs: readonly Float64Array[], outs: readonly Float64Array[], same: typeof bits, rows?: Rows, fused = false): number[] {
  const one = new Float64Array(w.length);
  return vs.flatMap((v, j) => {
    if (kind === 'hessian') single.hvp(w, v, one, rows, fused);
    else single.gnvp(w, v, one, rows, fused);
    return same(outs[j], one) ? [] : [j];
  });
}

describe('block curvature products', () => {
  for (const simd of [true, false]) {
    for (const c of CASES) {
      it(`are the single products bit for bit: ${c.name} (${simd ? 'SIMD' : 'scalar'} kernels, zero blocks not skipped)`, () => {
        const { net, w, rng } = build(c, { simd, skipZeroBlocks: false, blockSize: 4 });
        expect(net.blockSize).toBe(4);
        const P = net.parameterCount;
        // 11 directions: two full blocks of 4 and one of 3
        const vs = directions(net, rng, 11);
        for (const kind of ['hessian', 'gauss-newton'] as const) {
          for (const rows of [undefined, Int32Array.of(3, 0, 17, 17, 28, 5)]) {
            for (const fused of [false, true]) {
              const outs = vs.map(() => new Float64Array(P).fill(NaN));
              net.curvatureBlock(kind, w, vs, outs, rows, fused);
              expect({ kind, rows: rows?.length, fused, differ: mismatches(net, kind, w, vs, outs, bits, rows, fused) }).toEqual({ kind, rows: rows?.length, fused, differ: [] });
            }
          }
        }
      });
    }
  }

  it('sizes the kernels\' scratch for sixteen directions of wide layers (products 16 × as wide, chunks of 256 rows): still the single products bit for bit', () => {
    // wide hidden layers; then more inputs than units (the first layer's products widen only their units side)
    for (const [widths, inputs] of [[[40, 33], 5], [[8, 6], 70]] as const) {
      const c: Case = { name: 'wide', acts: ['relu', 'tanh'], loss: 'cross-entropy', widths: [...widths] };
      const { net, w, rng } = build(c, { simd: true, skipZeroBlocks: false, blockSize: MAX_BLOCK }, 300, inputs);
      expect(net.kernelKind).toBe('simd');
      const P = net.parameterCount;
      const vs = directions(net, rng, MAX_BLOCK);
      const outs = vs.map(() => new Float64Array(P));
      for (const kind of ['hessian', 'gauss-newton'] as const) {
        net.curvatureBlock(kind, w, vs, outs);
        expect(mismatches(net, kind, w, vs, outs, bits)).toEqual([]);
      }
    }
  });

  it('give the dense Hessian, the scaled and shifted operator and the trace probes their one-at-a-time numbers', () => {
    const c = CASES[3];
    const { net, w } = build(c, { simd: true, blockSize: 5 });
    const { net: ref } = build(c, { simd: true, blockSize: 1 });
    const P = net.parameterCount;
    for (const kind of ['hessian', 'gauss-newton'] as const) {
      const a = denseHessian(net, w, undefined, kind);
      const b = denseHessian(ref, w, undefined, kind);
      expect(a.products).toBe(P);
      expect(equal(a.matrix, b.matrix)).toBe(true);
      expect(a.asymmetry).toBe(b.asymmetry);
    }
    const scaling = Float64Array.from({ length: P }, (_, i) => 0.5 + (i % 7) / 10);
    const op = curvatureOperator(net, w, { scaling, shift: 0.3 });
    const opRef = curvatureOperator(ref, w, { scaling, shift: 0.3 });
    expect(op.blockSize).toBe(5);
    expect(opRef.blockSize).toBe(1);
    const rng = Rng.fromSeed(2);
    const vs = Array.from({ length: 7 }, () => rng.fillNormal(new Float64Array(P)));
    const outs = vs.map(() => new Float64Array(P));
    op.applyBlock(vs, outs);
    expect(op.count()).toBe(7);
    const one = new Float64Array(P);
    vs.forEach((v, j) => {
      opRef.apply(v, one);
      expect(equal(outs[j], one)).toBe(true);
    });
    const t = hutchinsonTrace(op.apply, P, Rng.fromSeed(8), { probes: 12, block: { apply: op.applyBlock, size: op.blockSize } });
    const tRef = hutchinsonTrace(opRef.apply, P, Rng.fromSeed(8), { probes: 12 });
    expect(equal(t.samples, tRef.samples)).toBe(true);
    expect(t.products).toBe(12);
  });

  it('pass through the recipe\'s weight decay: block products of the decayed objective are its single products', () => {
    const c = CASES[1];
    const { net, w, rng } = build(c, { simd: true, skipZeroBlocks: false, blockSize: 4 });
    const P = net.parameterCount;
    const mask = Uint8Array.from({ length: P }, (_, i) => i % 3 === 0 ? 0 : 1);
    const decayed = withWeightDecay(net, 0.07, mask);
    expect(decayed.blockSize).toBe(4);
    const vs = directions(net, rng, 6);
    const outs = vs.map(() => new Float64Array(P));
    for (const kind of ['hessian', 'gauss-newton'] as const) {
      decayed.curvatureBlock?.(kind, w, vs, outs);
      expect(mismatches(decayed, kind, w, vs, outs, bits)).toEqual([]);
    }
  });

  it('skip zero blocks only where every direction has them: the same numbers as one at a time', () => {
    const c = CASES[3];
    const { net, w, rng } = build(c, { simd: true, blockSize: 3 });
    const P = net.parameterCount;
    // unit vectors in one layer's block (skipped together) and mixed blocks
    const units = [0, 1, 2].map((i) => {
      const e = new Float64Array(P);
      e[net.blocks[4].offset + i] = 1;
      return e;
    });
    for (const vs of [units, directions(net, rng, 6)]) {
      for (const kind of ['hessian', 'gauss-newton'] as const) {
        const outs = vs.map(() => new Float64Array(P));
        net.curvatureBlock(kind, w, vs, outs);
        expect(mismatches(net, kind, w, vs, outs, equal)).toEqual([]);
      }
    }
  });

  it('keeps working after other evaluations: kept passes, new weights, other rows', () => {
    const c = CASES[1];
    const { net, w, rng } = build(c, { simd: true, skipZeroBlocks: false, blockSize: 5 });
    const { net: ref } = build(c, { simd: true, skipZeroBlocks: false, blockSize: 1 });
    const P = net.parameterCount;
    const vs = directions(net, rng, 5);
    const w2 = w.map((x, i) => x + 0.01 * Math.sin(i));
    const g = new Float64Array(P);
    const one = new Float64Array(P);
    const outs = vs.map(() => new Float64Array(P));
    const steps: Array<() => void> = [
      () => net.gnvp(w, vs[0], one),
      () => net.gradient(w2, g),
      () => net.hvp(w2, vs[1], one, Int32Array.of(1, 2, 3)),
      () => net.value(w),
      () => net.curvatureBlock('gauss-newton', w2, vs, outs),
    ];
    for (const step of steps) {
      step();
      for (const [kind, at, rows] of [['hessian', w, undefined], ['gauss-newton', w2, Int32Array.of(4, 4, 2)], ['hessian', w2, Int32Array.of(4, 4, 2)]] as const) {
        net.curvatureBlock(kind, at, vs, outs, rows);
        expect(mismatches(ref, kind, at, vs, outs, bits, rows)).toEqual([]);
      }
    }
  });

  it('chooses its block size from a workspace budget and refuses a bad one before allocating', () => {
    // narrow layers: the default block; MLP b's 64 units: none; many rows: what 8 MB of buffers hold
    expect(build(CASES[0], { simd: true }).net.blockSize).toBe(DEFAULT_BLOCK);
    expect(build({ ...CASES[0], widths: [64] }, { simd: true }).net.blockSize).toBe(1);
    const many = build({ ...CASES[2], widths: [24, 20] }, { simd: true }, 1000).net;
    // 7 buffers × 1000 rows × (24 + 20 + 3) units + 4 stacked copies of the widest layer block (20 × 25) doubles per direction
    expect(many.blockSize).toBe(2 ** Math.floor(Math.log2(Math.floor((8 * 1024 * 1024) / (8 * (7 * 1000 * 47 + 4 * 20 * 25))))));
    expect(many.blockSize).toBe(2);
    expect(() => build(CASES[0], { simd: true, blockSize: 0 })).toThrow(/blockSize must be an integer from 1 to 16, got 0/);
    expect(() => build(CASES[0], { simd: true, blockSize: MAX_BLOCK + 1 })).toThrow(/blockSize/);
    const { net, w } = build(CASES[0], { simd: true });
    const P = net.parameterCount;
    expect(() => net.curvatureBlock('hessian', w, [new Float64Array(P)], [])).toThrow(/a block of 1 directions needs as many outputs, got 0/);
    expect(() => net.curvatureBlock('hessian', w, [new Float64Array(P), new Float64Array(3)], [new Float64Array(P), new Float64Array(P)])).toThrow(/direction 1 of the block and its output need \d+ entries, got 3 and \d+/);
  });
});
