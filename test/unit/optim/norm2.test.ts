/**
 * The scaled Euclidean norm behind the step record's norms: a rewrite for speed (one division
 * per entry, named once) must give the bits of the expression it replaced, which the committed
 * ledgers' records were computed with, and still avoid overflow.
 */
import { norm2 } from '../../../src/core/objective';
import { Rng } from '../../../src/core/rng';

/** The former loop, written out as it was: each quotient computed twice. */
function twoDivisions(a: Float64Array, offset = 0, size = a.length - offset): number {
  let scale = 0;
  let ssq = 1;
  for (let i = offset; i < offset + size; i++) {
    const x = a[i];
    if (x !== 0) {
      const ax = Math.abs(x);
      if (scale < ax) {
        ssq = 1 + ssq * (scale / ax) * (scale / ax);
        scale = ax;
      } else {
        ssq += (ax / scale) * (ax / scale);
      }
    }
  }
  return scale * Math.sqrt(ssq);
}

describe('norm2', () => {
  const cases: [string, Float64Array][] = [];
  const rng = Rng.fromSeed(11);
  for (const n of [1, 2, 7, 1000, 85002]) {
    const a = rng.fillNormal(new Float64Array(n));
    for (let i = 0; i < n; i += 3) a[i] = 0;
    for (let i = 1; i < n; i += 97) a[i] *= 1e150;
    cases.push([`n = ${n}`, a]);
  }

  it(`covers ${cases.length} vectors`, () => {
    expect(cases.length).toBe(5);
  });

  it.each(cases)('gives the former bits, whole and by slices (%s)', (_name, a) => {
    expect(Object.is(norm2(a), twoDivisions(a))).toBe(true);
    const mid = a.length >> 1;
    expect(Object.is(norm2(a, 0, mid), twoDivisions(a, 0, mid))).toBe(true);
    expect(Object.is(norm2(a, mid, a.length - mid), twoDivisions(a, mid, a.length - mid))).toBe(true);
  });

  it('matches closed forms and does not overflow', () => {
    // source: the 3-4-5 right triangle; ‖(c, c)‖ = c·√2 (Pythagoras), here with c²
    // beyond the largest double (IEEE 754 binary64 max ≈ 1.8e308); 14 digits: a few ulps, common practice (no single source).
    expect(norm2(Float64Array.from([3, 4]))).toBe(5);
    expect(norm2(Float64Array.from([1e300, 1e300])) / 1e300).toBeCloseTo(Math.SQRT2, 14);
    expect(norm2(new Float64Array(4))).toBe(0);
  });
});
