/**
 * Accuracy of core's engine-independent elementary functions against decimal.js 10.6
 * (arbitrary precision, correctly rounded at 40 significant digits): the error of every
 * result in units in the last place (ulp) of the exact value, over dense grids, random
 * points, tiny and subnormal arguments and the overflow/underflow thresholds; special values
 * (±0, ±∞, NaN) are checked exactly. The measured maxima are printed.
 */
import * as el from '../../../src/core/elementary';
import { Rng } from '../../../src/core/rng';
import { D, exact, ulpError, type Dec } from './exact';

/** Numbers whose magnitude rounds to ∞ in double: ≥ 2¹⁰²⁴ − 2⁹⁷⁰ (source: IEEE 754-2019 §4.3.1, round to nearest). */
const OVERFLOW = new D(2).pow(1024).minus(new D(2).pow(970));
const ONE = new D(1);
const HI = D.clone({ precision: 80 });
/** Enough digits to hold a double up to 2¹⁰²⁴ exactly and reduce it by π to 40 more digits. */
const HUGE = D.clone({ precision: 400 });

interface FunctionCase {
  name: string;
  f: (x: number) => number;
  ref: (x: number) => Dec;
  points: number[];
  /** Largest error allowed, in ulps, with its source beside the table entry. */
  bound: number;
}

/** n evenly spaced points on [a, b], nudged off round numbers by an irrational fraction of the step. */
const grid = (a: number, b: number, n: number): number[] => Array.from({ length: n + 1 }, (_, i) => a + ((b - a) * (i + (i % 7) * 0.1234567)) / n);
/** n points spread geometrically on [a, b] (a, b > 0), both signs when `signed`. */
const geometric = (a: number, b: number, n: number, signed = false): number[] => {
  const la = Math.log2(a), lb = Math.log2(b);
  const out = Array.from({ length: n + 1 }, (_, i) => 2 ** (la + ((lb - la) * i) / n) * (1 + (i % 5) * 0.0123));
  return signed ? [...out, ...out.map((x) => -x)] : out;
};
const rng = Rng.fromSeed(20261203);
const random = (a: number, b: number, n: number): number[] => Array.from({ length: n }, () => a + (b - a) * rng.uniform());
const TINY = [5e-324, 1e-323, 2.2250738585072014e-308, 2.225073858507201e-308, 1e-300, 1e-200, 1e-100, 1e-20, 2 ** -54, 2 ** -28, 1e-8];
const tinyBoth = [...TINY, ...TINY.map((x) => -x)];

/** Series Σ (−1)ⁿ⁺¹ xⁿ/n for log1p of a tiny x (exact to far below an ulp when |x| < 1e-12). */
const log1pSeries = (X: Dec): Dec => X.minus(X.pow(2).div(2)).plus(X.pow(3).div(3)).minus(X.pow(4).div(4));
/** Series Σ xⁿ/n! for expm1 of a tiny x. */
const expm1Series = (X: Dec): Dec => X.plus(X.pow(2).div(2)).plus(X.pow(3).div(6)).plus(X.pow(4).div(24));
/**
 * erf(x) = (2/√π)·e^(−x²)·Σ 2ⁿx²ⁿ⁺¹/(1·3·…·(2n+1)): all terms positive, so no cancellation
 * (source: Abramowitz & Stegun, Handbook of Mathematical Functions, 1964, 7.1.6).
 */
function erfSeries(x: number): Dec {
  if (x === 0) return new D(0);
  if (Math.abs(x) > 9) return new D(x > 0 ? 1 : -1); // 1 − erf(9) < 1e-36: far below an ulp of 1
  const X = exact(x, HI);
  const X2 = X.times(X);
  let term = X;
  let sum = X;
  for (let n = 1; n < 2000; n++) {
    term = term.times(X2).times(2).div(2 * n + 1);
    sum = sum.plus(term);
    if (term.abs().lt(sum.abs().times('1e-60'))) break;
  }
  const r = sum.times(X2.neg().exp()).times(2).div(HI.acos(-1).sqrt());
  return new D(r.toString());
}

const CASES: FunctionCase[] = [
  // from memory: fdlibm's source comments state "the error is always less than 1 ulp" for exp,
  // expm1, log and log1p, and keep the sin/cos kernels and erf's fits below 1 ulp as well.
  { name: 'exp', f: el.exp, ref: (x) => exact(x).exp(), bound: 1, points: [...grid(-745.2, 709.8, 2000), ...grid(-1, 1, 500), ...tinyBoth, 709.782712893384, 709.7827128933841, -745.1332191019411, -745.1332191019412, -708.4, -708.3964185322641] },
  { name: 'expm1', f: el.expm1, ref: (x) => (Math.abs(x) < 1e-12 ? expm1Series(exact(x)) : exact(x).exp().minus(1)), bound: 1, points: [...grid(-40, 709.78, 1500), ...grid(-1, 1, 500), ...geometric(1e-12, 1, 200, true), ...tinyBoth, 709.782712893384] },
  { name: 'log', f: el.log, ref: (x) => exact(x).ln(), bound: 1, points: [...geometric(5e-324, 1.7e308, 1500), ...grid(0.5, 2, 800), ...TINY, 1 + 2 ** -52, 1 - 2 ** -53, 1.7976931348623157e308] },
  { name: 'log1p', f: el.log1p, ref: (x) => (Math.abs(x) < 1e-12 ? log1pSeries(exact(x)) : exact(x).plus(1).ln()), bound: 1, points: [...geometric(1e-12, 1e300, 1000), ...geometric(1e-12, 0.999999, 800).map((x) => -x), ...grid(-0.9, 2, 600), ...tinyBoth, -1 + 2 ** -53, 1.7976931348623157e308] },
  { name: 'sin', f: el.sin, ref: (x) => (Math.abs(x) > 1e4 ? new D(exact(x, HUGE).sin().toString()) : exact(x).sin()), bound: 1, points: [...grid(0, 2 * Math.PI, 1000), ...grid(-20, 20, 1000), ...tinyBoth, 1e5, 1e10, 1e22, 1e100, 1e300, 1.7976931348623157e308, -3.0e9] },
  { name: 'cos', f: el.cos, ref: (x) => (Math.abs(x) > 1e4 ? new D(exact(x, HUGE).cos().toString()) : exact(x).cos()), bound: 1, points: [...grid(0, 2 * Math.PI, 1000), ...grid(-20, 20, 1000), ...tinyBoth, 1e5, 1e10, 1e22, 1e100, 1e300, 1.7976931348623157e308, -3.0e9] },
  { name: 'erf', f: el.erf, ref: erfSeries, bound: 1, points: [...grid(-6.5, 6.5, 2000), ...tinyBoth, 0.84375, 1.25, 2.857142857142857, 5.9, 6, 10, -10] },
  // source: first-order error analysis (Higham, Accuracy and Stability of Numerical
  // Algorithms, 2nd ed., 2002, §2–3): expm1's < 1 ulp enters e/(e + 2) scaled by 2/(e + 2) ≤ 0.45
  // and the quotient is rounded once (≤ 0.5 ulp); Cephes' rational branch is quoted at 2.5e-16
  // relative (Moshier, Cephes tanh.c, from memory) ≈ 1.1 ulp at worst, so 1 ulp is the aim there.
  { name: 'tanh', f: el.tanh, ref: (x) => exact(x).tanh(), bound: 1, points: [...grid(-25, 25, 1500), ...grid(-0.7, 0.7, 800), ...tinyBoth, 0.625, 0.6249999999999999, 19.1, 22, 21.999999999999996] },
  // source: the same analysis: exp's < 1 ulp passes through with a factor ≤ 1, plus one rounding
  // of the quotient (sigmoid) or of log1p (softplus), each ≤ 0.5 ulp — 1.5 ulp at worst.
  { name: 'sigmoid', f: el.sigmoid, ref: (x) => ONE.div(ONE.plus(exact(x).neg().exp())), bound: 1.5, points: [...grid(-745, 40, 1500), ...grid(-5, 5, 800), ...tinyBoth, -745.1332191019411, 36.7368005696771] },
  {
    name: 'softplus', f: el.softplus, bound: 1.5, points: [...grid(-745, 100, 1500), ...grid(-5, 5, 800), ...tinyBoth, 1e10, 1e300],
    ref: (x) => {
      const X = exact(x, HI);
      // log(1 + eˣ) = eˣ − e²ˣ/2 + … below −100 and x + e⁻ˣ − … above 100 (Taylor series of log1p)
      if (x < -100) { const e = X.exp(); return new D(e.minus(e.pow(2).div(2)).toString()); }
      if (x > 100) return new D(X.plus(X.neg().exp()).toString());
      return new D(X.exp().plus(1).ln().toString());
    },
  },
];

/** Error of `computed` for the exact value E: 0 when both overflow, else ulps (∞ when only one overflows). */
function error(computed: number, E: Dec): number {
  const overflows = E.abs().gte(OVERFLOW);
  if (!Number.isFinite(computed) || overflows) return Number.isFinite(computed) || !overflows || Math.sign(computed) !== E.s ? Infinity : 0;
  return ulpError(computed, E);
}

const measured: { name: string; points: number; max: number; at: number | string }[] = [];

afterAll(() => {
  if (measured.length === 0) return;
  const rows = measured.map((m) => `  ${m.name.padEnd(9)} ${m.max.toFixed(3)} ulp  (at ${typeof m.at === 'number' ? `x = ${m.at}` : m.at}, ${m.points} points)`);
  console.log(`maximum error of core/elementary against decimal.js:\n${rows.join('\n')}`);
});

describe('elementary functions against decimal.js', () => {
  it('covers every function core/elementary exports (but pow, checked below)', () => {
    expect(CASES.map((c) => c.name).sort()).toEqual(Object.keys(el).filter((k) => k !== 'pow').sort());
  });

  it.each(CASES.map((c) => [c.name, c] as const))('%s stays within its bound', (_name, c) => {
    const points = [...c.points, ...random(-50, 50, 300)].filter((x) => Number.isFinite(x));
    expect(points.length).toBeGreaterThan(1000);
    let max = 0;
    let at = NaN;
    for (const x of points) {
      const E = c.ref(x);
      if (E.isNaN()) continue;
      const e = error(c.f(x), E);
      if (!(e <= max)) { max = e; at = x; }
    }
    measured.push({ name: c.name, points: points.length, max, at });
    expect(max).toBeLessThanOrEqual(c.bound);
  });

  it('pow stays within 1 ulp on positive bases and the exponents core uses', () => {
    // from memory: fdlibm's e_pow.c states its error is below 1 ulp (0.5 + a little)
    const xs = geometric(1e-3, 1e3, 60);
    const ys = [...grid(-20, 20, 60), 0.5, 1 / 3, 2, 3, 10];
    const spans = geometric(1, 1e7, 40).map((s) => Math.round(s)); // checkpoint thinning: span^(i/(k+1))
    const pairs: [number, number][] = [...xs.flatMap((x) => ys.map((y) => [x, y] as [number, number])), ...spans.flatMap((s) => [0.05, 0.3, 0.5, 0.95].map((y) => [s, y] as [number, number]))];
    expect(pairs.length).toBeGreaterThan(4000);
    let max = 0;
    let at = '';
    for (const [x, y] of pairs) {
      const e = error(el.pow(x, y), exact(x).pow(exact(y)));
      if (!(e <= max)) { max = e; at = `${x}^${y}`; }
    }
    measured.push({ name: 'pow', points: pairs.length, max, at });
    expect(max).toBeLessThanOrEqual(1);
  });
});

describe('special values', () => {
  // source: IEEE 754-2019 §9.2 (recommended operations, special cases) and C99 Annex F.9, the
  // values ECMA-262 §21.3.2 also requires of Math.exp, Math.log, … (the engine's own results are
  // not used as expected values)
  const nan = NaN, inf = Infinity;
  const table: [string, (x: number) => number, number, number][] = [
    ['exp', el.exp, nan, nan], ['exp', el.exp, inf, inf], ['exp', el.exp, -inf, 0], ['exp', el.exp, 0, 1], ['exp', el.exp, -0, 1], ['exp', el.exp, 710, inf], ['exp', el.exp, -746, 0],
    ['expm1', el.expm1, nan, nan], ['expm1', el.expm1, inf, inf], ['expm1', el.expm1, -inf, -1], ['expm1', el.expm1, 0, 0], ['expm1', el.expm1, -0, -0], ['expm1', el.expm1, 710, inf],
    ['log', el.log, nan, nan], ['log', el.log, inf, inf], ['log', el.log, -inf, nan], ['log', el.log, 0, -inf], ['log', el.log, -0, -inf], ['log', el.log, -1, nan], ['log', el.log, 1, 0],
    ['log1p', el.log1p, nan, nan], ['log1p', el.log1p, inf, inf], ['log1p', el.log1p, -1, -inf], ['log1p', el.log1p, -2, nan], ['log1p', el.log1p, 0, 0], ['log1p', el.log1p, -0, -0],
    ['sin', el.sin, nan, nan], ['sin', el.sin, inf, nan], ['sin', el.sin, -inf, nan], ['sin', el.sin, 0, 0], ['sin', el.sin, -0, -0],
    ['cos', el.cos, nan, nan], ['cos', el.cos, inf, nan], ['cos', el.cos, -inf, nan], ['cos', el.cos, 0, 1], ['cos', el.cos, -0, 1],
    ['erf', el.erf, nan, nan], ['erf', el.erf, inf, 1], ['erf', el.erf, -inf, -1], ['erf', el.erf, 0, 0], ['erf', el.erf, -0, -0],
    ['tanh', el.tanh, nan, nan], ['tanh', el.tanh, inf, 1], ['tanh', el.tanh, -inf, -1], ['tanh', el.tanh, 0, 0], ['tanh', el.tanh, -0, -0], ['tanh', el.tanh, 1e300, 1],
    // sigmoid and softplus: limits of their definitions
    ['sigmoid', el.sigmoid, nan, nan], ['sigmoid', el.sigmoid, inf, 1], ['sigmoid', el.sigmoid, -inf, 0], ['sigmoid', el.sigmoid, 0, 0.5], ['sigmoid', el.sigmoid, -0, 0.5], ['sigmoid', el.sigmoid, -1e300, 0],
    ['softplus', el.softplus, nan, nan], ['softplus', el.softplus, inf, inf], ['softplus', el.softplus, -inf, 0], ['softplus', el.softplus, 1e300, 1e300], ['softplus', el.softplus, -1e300, 0],
  ];
  it.each(table)('%s(%p) is %p', (_n, f, x, want) => {
    expect(Object.is(f(x), want)).toBe(true);
  });

  // source: ECMA-262 15th ed. (2024), §6.1.6.1.3 Number::exponentiate (the table JavaScript's ** follows)
  const powTable: [number, number, number][] = [
    [2, nan, nan], [nan, 0, 1], [nan, -0, 1], [nan, 1, nan], [1, inf, nan], [-1, -inf, nan], [2, inf, inf], [0.5, inf, 0], [2, -inf, 0], [0.5, -inf, inf],
    [inf, 2, inf], [inf, -2, 0], [-inf, 3, -inf], [-inf, 2, inf], [-inf, -3, -0], [0, 2, 0], [0, -2, inf], [-0, 3, -0], [-0, -3, -inf], [-0, -2, inf],
    [-8, 1 / 3, nan], [-2, 3, -8], [2, 0.5, Math.SQRT2], [2, -1074, 5e-324], [2, 1024, inf], [10, 2, 100],
  ];
  it.each(powTable)('pow(%p, %p) is %p', (x, y, want) => {
    expect(Object.is(el.pow(x, y), want)).toBe(true);
  });
});
