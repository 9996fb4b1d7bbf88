/**
 * The WebAssembly SIMD kernels against the plain-JavaScript loops they replace: identical bits
 * on many shapes — 1-wide, odd, one past and one short of the tile sizes (3 rows × 6 columns),
 * more rows than one 128-row chunk — with exact zeros in the coefficients (as ReLU layers
 * make them) and with non-finite operands (which the SIMD path hands to the loops). Bit
 * equality is the check: the two paths must add the same products in the same order
 * (common practice (no single source): IEEE-754 addition is deterministic but not associative).
 */
import { matrixKernels, type LayerShape, type MatrixKernels } from '../../../src/core/model/kernels';
import { Rng } from '../../../src/core/rng';

const SIZES = [1, 2, 3, 4, 5, 6, 7, 11, 13, 17];
const SHAPES: [number, number, number][] = [];
for (const n of [1, 2, 3, 4, 7]) for (const fanIn of SIZES) for (const units of [1, 3, 6, 7, 13]) SHAPES.push([n, fanIn, units]);
SHAPES.push([129, 5, 7], [257, 13, 4], [300, 20, 64], [64, 64, 20], [31, 37, 41]);

/** Same bits, NaN payload aside (every NaN counts as equal to every NaN). */
function firstDifference(a: Float64Array, b: Float64Array): number {
  expect(a.length).toBe(b.length);
  for (let i = 0; i < a.length; i++) if (!Object.is(a[i], b[i]) && !(Number.isNaN(a[i]) && Number.isNaN(b[i]))) return i;
  return -1;
}

interface Operands {
  shape: LayerShape;
  n: number;
  arrays: Float64Array[];
}

/** Parameters (with a spare block before and after the layer), input, coefficients and an output, filled from `seed`. */
function operands(n: number, fanIn: number, units: number, seed: number, simd: boolean, special = false): Operands & { kernels: MatrixKernels } {
  const wOff = 5;
  const P = wOff + units * fanIn + units + 3;
  const lengths = [P, n * fanIn, n * units, n * Math.max(fanIn, units), P];
  const space = matrixKernels(lengths, Math.max(fanIn, units), simd);
  const [w, x, d, out, g] = space.arrays;
  const rng = Rng.fromSeed(seed);
  rng.fillNormal(w);
  rng.fillNormal(x);
  rng.fillNormal(d);
  rng.fillNormal(out);
  rng.fillNormal(g);
  // Exact zeros in the coefficients, in runs, as a ReLU layer's δa has them.
  for (let i = 0; i < d.length; i++) if (rng.uniform() < 0.4) d[i] = i % 3 === 0 ? -0 : 0;
  if (special) {
    x[Math.floor(rng.uniform() * x.length)] = Infinity;
    w[wOff + Math.floor(rng.uniform() * units * fanIn)] = NaN;
  }
  return { shape: { fanIn, units, wOff, bOff: wOff + units * fanIn }, n, arrays: [w, x, d, out, g], kernels: space.kernels };
}

describe('the SIMD matrix kernels give the bits of the plain-JavaScript loops', () => {
  it('run as WebAssembly SIMD under Node 20 (so the comparison below is not scalar against scalar)', () => {
    expect(matrixKernels([4], 4).kernels.kind).toBe('simd');
  });

  it(`cover ${SHAPES.length} shapes`, () => {
    expect(SHAPES.length).toBe(255);
  });

  const flags = [[true, false], [false, true], [true, true], [false, false]] as const;
  it.each(SHAPES)('n = %i, fanIn = %i, units = %i', (n, fanIn, units) => {
    for (const special of [false, true]) {
      for (const [withBias, accumulate] of flags) {
        const seed = 7 * n + 131 * fanIn + units + (special ? 1 : 0);
        const a = operands(n, fanIn, units, seed, true, special);
        const b = operands(n, fanIn, units, seed, false, special);
        expect(a.kernels.kind).toBe('simd');
        expect(b.kernels.kind).toBe('scalar');
        const [wa, xa, da, oa, ga] = a.arrays;
        const [wb, xb, db, ob, gb] = b.arrays;
        a.kernels.dense(wa, a.shape, xa, n, oa, withBias, accumulate);
        b.kernels.dense(wb, b.shape, xb, n, ob, withBias, accumulate);
        expect(firstDifference(oa, ob)).toBe(-1);
        a.kernels.outer(ga, a.shape, da, xa, n, withBias);
        b.kernels.outer(gb, b.shape, db, xb, n, withBias);
        expect(firstDifference(ga, gb)).toBe(-1);
        a.kernels.backprop(wa, a.shape, da, n, oa, accumulate);
        b.kernels.backprop(wb, b.shape, db, n, ob, accumulate);
        expect(firstDifference(oa, ob)).toBe(-1);
      }
    }
  });

  it('the scalar loops differ when one sum is added in another order (the check can fail)', () => {
    // source: IEEE 754-2019 §4.3 round-to-nearest — (a + b) + c and a + (b + c) differ for these three.
    const a = 1e16, b = -1e16, c = 1;
    expect((a + b) + c).not.toBe(a + (b + c));
  });
});
