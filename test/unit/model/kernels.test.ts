/**
 * The WebAssembly SIMD kernels against the plain-JavaScript loops they replace: identical bits
 * on many shapes — 1-wide, odd, one past and one short of the tile sizes (3 rows × 6 columns),
 * more rows than one 256-row chunk — with exact zeros in the coefficients (as ReLU layers
 * make them) and with non-finite operands (which the SIMD path hands to the loops). Bit
 * equality is the check: the two paths must add the same products in the same order
 * (common practice (no single source): IEEE-754 addition is deterministic but not associative).
 */
import { matrixKernels, type LayerShape, type MatrixKernels } from '../../../src/core/model/kernels';
import { Rng } from '../../../src/core/rng';
import { activation } from '../../../src/core/model/activations';

const SIZES = [1, 2, 3, 4, 5, 6, 7, 11, 13, 17];
const SHAPES: [number, number, number][] = [];
for (const n of [1, 2, 3, 4, 7]) for (const fanIn of SIZES) for (const units of [1, 3, 6, 7, 13]) SHAPES.push([n, fanIn, units]);
SHAPES.push([129, 5, 7], [257, 13, 4], [300, 20, 64], [64, 64, 20], [31, 37, 41]);
// The sparse path's panels are sixteen columns wide: one exact panel, one short and one past, over two chunks.
SHAPES.push([5, 16, 16], [3, 33, 31], [257, 17, 18], [513, 48, 15]);

/** Same bits, NaN payload aside (every NaN counts as equal to every NaN). */
function firstDifference(a: Float64Array, b: Float64Array): number {
  expect(a.length).toBe(b.length);
  for (let i = 0; i < a.length; i++) if (!Object.is(a[i], b[i]) && !(Number.isNaN(a[i]) && Number.isNaN(b[i]))) return i;
  return -1;
}

/** zeros: half the inputs ±0 (the sparse kernels run); special: that and ±∞, NaN in the operands. */
const VARIANTS = ['plain', 'special', 'zeros', 'zeros, bias −0'] as const;
type Variant = (typeof VARIANTS)[number];

interface Operands {
  shape: LayerShape;
  n: number;
  arrays: Float64Array[];
}

/** Parameters (with a spare block before and after the layer), input, coefficients and an output, filled from `seed`. */
function operands(n: number, fanIn: number, units: number, seed: number, simd: boolean, variant: Variant): Operands & { kernels: MatrixKernels } {
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
  // Exact zeros in the coefficients, as a ReLU layer's δa has them: a few (the tiles run and add
  // them) or half (the sparse path runs and skips them).
  const share = variant === 'plain' ? 0.15 : 0.5;
  for (let i = 0; i < d.length; i++) if (rng.uniform() < share) d[i] = i % 3 === 0 ? -0 : 0;
  if (variant === 'special') {
    x[Math.floor(rng.uniform() * x.length)] = Infinity;
    w[wOff + Math.floor(rng.uniform() * units * fanIn)] = NaN;
  }
  if (variant !== 'plain') {
    // Half the inputs exactly zero, as a ReLU layer's outputs (−0 too: a user's data may hold it).
    for (let i = 0; i < x.length; i++) if (rng.uniform() < 0.5) x[i] = i % 5 === 0 ? -0 : 0;
  }
  // A sum that starts at a bias of −0 must add every term (+0 + −0 … is +0, not −0).
  // Only a row with every input zero shows it: the sum is the bias plus zeros alone.
  if (variant === 'zeros, bias −0') {
    for (let o = 0; o < units; o += 2) w[wOff + units * fanIn + o] = -0;
    for (let r = 0; r < n; r += 3) x.fill(0, r * fanIn, (r + 1) * fanIn);
  }
  return { shape: { fanIn, units, wOff, bOff: wOff + units * fanIn }, n, arrays: [w, x, d, out, g], kernels: space.kernels };
}

describe('the SIMD matrix kernels give the bits of the plain-JavaScript loops', () => {
  it('run as WebAssembly SIMD under Node 20 (so the comparison below is not scalar against scalar)', () => {
    expect(matrixKernels([4], 4).kernels.kind).toBe('simd');
  });

  it(`cover ${SHAPES.length} shapes`, () => {
    expect(SHAPES.length).toBe(259);
  });

  const flags = [[true, false], [false, true], [true, true], [false, false]] as const;
  it.each(SHAPES)('n = %i, fanIn = %i, units = %i', (n, fanIn, units) => {
    for (const variant of VARIANTS) {
      for (const [withBias, accumulate] of flags) {
        const seed = 7 * n + 131 * fanIn + units + VARIANTS.indexOf(variant);
        const a = operands(n, fanIn, units, seed, true, variant);
        const b = operands(n, fanIn, units, seed, false, variant);
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

describe('the SIMD elementwise kernels give the bits of the plain-JavaScript loops', () => {
  // Signed zeros, infinities, NaN, subnormals and values either side of zero: where ReLU's
  // comparison and a product's sign are decided (common practice (no single source)).
  const SPECIAL = [0, -0, Infinity, -Infinity, NaN, 5e-324, -5e-324, 1e-300, -1e-300, 1, -1, 0.5, -2.5, 1e300, -1e300];

  /** Arrays of length n in the kernels' memory (SIMD) or plain (scalar), filled alike from `seed`. */
  function filled(n: number, seed: number, simd: boolean): { k: MatrixKernels; a: Float64Array; b: Float64Array; c: Float64Array; e: Float64Array; q: Float64Array; f: Float64Array; d: Float64Array } {
    const space = matrixKernels([n, n, n, n, n, n, n], 4, simd);
    const [a, b, c, e, q, f, d] = space.arrays;
    const rng = Rng.fromSeed(seed);
    for (const x of [a, b, c, e, q]) {
      for (let i = 0; i < n; i++) x[i] = rng.uniform() < 0.5 ? SPECIAL[Math.floor(rng.uniform() * SPECIAL.length)] : rng.normal();
    }
    // Stale values the kernels must overwrite everywhere.
    f.fill(7);
    d.fill(-7);
    return { k: space.kernels, a, b, c, e, q, f, d };
  }

  const LENGTHS = [1, 2, 3, 4, 5, 16, 17, 255, 1024];
  it(`cover ${LENGTHS.length} lengths`, () => {
    expect(LENGTHS.length).toBe(9);
  });

  it.each(LENGTHS)('relu, hadamard and rDelta, n = %i', (n) => {
    const s = filled(n, n, true);
    const j = filled(n, n, false);
    expect(s.k.kind).toBe('simd');
    expect(j.k.kind).toBe('scalar');
    s.k.relu(s.a, s.f, s.d, n);
    j.k.relu(j.a, j.f, j.d, n);
    expect(firstDifference(s.f, j.f)).toBe(-1);
    expect(firstDifference(s.d, j.d)).toBe(-1);
    // The built-in activation's own loop, f″ aside, is what both match.
    const f = new Float64Array(n), d1 = new Float64Array(n);
    activation('relu').evaluate(j.a, f, d1, null, n);
    expect(firstDifference(s.f, f)).toBe(-1);
    expect(firstDifference(s.d, d1)).toBe(-1);
    s.k.hadamard(s.a, s.b, n, s.f);
    j.k.hadamard(j.a, j.b, n, j.f);
    expect(firstDifference(s.f, j.f)).toBe(-1);
    for (let i = 0; i < n; i++) expect(Object.is(s.f[i], s.a[i] * s.b[i]) || Number.isNaN(s.f[i])).toBe(true);
    s.k.rDelta(s.a, s.b, s.c, s.e, s.q, n, s.d);
    j.k.rDelta(j.a, j.b, j.c, j.e, j.q, n, j.d);
    expect(firstDifference(s.d, j.d)).toBe(-1);
  });

  it('relu maps −0, NaN and the smallest subnormals as the scalar comparison does', () => {
    const space = matrixKernels([7, 7, 7], 4, true);
    const [a, f, d] = space.arrays;
    a.set([-0, NaN, 5e-324, -5e-324, Infinity, -Infinity, 0]);
    space.kernels.relu(a, f, d, 7);
    // source: IEEE 754-2019 §5.11 — comparisons with NaN are false and −0 > 0 is false.
    expect(Array.from(f).map((x) => Object.is(x, -0) ? '-0' : String(x))).toEqual(['0', '0', '5e-324', '0', 'Infinity', '0', '0']);
    expect(Array.from(d)).toEqual([0, 0, 1, 0, 1, 0, 0]);
  });
});
