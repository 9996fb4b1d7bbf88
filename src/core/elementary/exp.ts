/**
 * exp and expm1, table-driven (Tang, "Table-driven implementation of the exponential function
 * in IEEE floating-point arithmetic", ACM TOMS 15(2), 1989): x = (32m + j)·ln2/32 + r with
 * |r| ≤ ln2/64, so eˣ = 2ᵐ · 2^(j/32) · eʳ; 2^(j/32) comes from a table in two parts and
 * eʳ − 1 from its Taylor polynomial to degree 7 (truncation below 5·10⁻¹⁹ relative on that
 * interval). Only +, −, ×, Math.round and table look-ups: the same bits in every engine, and
 * several times faster than a port that rebuilds doubles from their words.
 *
 * Accuracy (measured against decimal.js in `test/reference/elementary/`): see DEVELOPERS.md.
 */
import * as table from './tables';

// Module-local copies: an imported binding may be a getter in CommonJS builds (tsx, jest),
// which the hot loops below should not pay for on every call.
const EXP_TABLE_SIZE = table.EXP_TABLE_SIZE;
const INV_STEP = table.INV_STEP;
const STEP_HI = table.STEP_HI;
const STEP_LO = table.STEP_LO;
const POW2_HI = table.POW2_HI;
const POW2_LO = table.POW2_LO;

/** Above this eˣ rounds to ∞ (ln of the largest double plus half an ulp). */
const OVERFLOW = 709.782712893384;
/** Below this eˣ rounds to 0 (ln 2⁻¹⁰⁷⁵). */
const UNDERFLOW = -745.1332191019412;
/** Below this eˣ − 1 rounds to −1 (eˣ < 2⁻⁵⁴). */
const EXPM1_MINUS_ONE = -38;

// Taylor coefficients 1/n! of eʳ − 1 − r.
const C2 = 0.5;
const C3 = 1 / 6;
const C4 = 1 / 24;
const C5 = 1 / 120;
const C6 = 1 / 720;
const C7 = 1 / 5040;

/** Exact powers of two 2ᵐ for m = −1074 … 1023, built by exact halvings and doublings. */
const POW2 = ((): Float64Array => {
  const t = new Float64Array(2098);
  t[1074] = 1;
  for (let m = 1; m <= 1023; m++) t[1074 + m] = t[1073 + m] * 2;
  for (let m = 1; m <= 1074; m++) t[1074 - m] = t[1075 - m] * 0.5;
  return t;
})();

/** 2ᵐ·y for an integer m in [−1074 − 53, 1024], with one rounding when the product is normal. */
function scale(y: number, m: number): number {
  if (m > 1023) return y * POW2[1074 + 1023] * POW2[1074 + m - 1023];
  if (m < -1022) return y * POW2[1074 + m + 54] * POW2[1074 - 54]; // subnormal result: rounded twice at most
  return y * POW2[1074 + m];
}

/** The low part of the last {@link expSplit} (a typed-array cell: storing a double there allocates nothing). */
export const EXP_TAIL = new Float64Array(1);

/**
 * eˣ as an unevaluated sum eh + el of two doubles, eh = {@link exp}(x) returned and its rounding
 * error el written to {@link EXP_TAIL}[0] (|el| ≤ ½ ulp), so eh + el is within a few hundredths
 * of an ulp of eˣ when eˣ is normal (callers
 * that go on computing with eˣ then round once instead of inheriting exp's own rounding).
 * Outside the normal range el is 0 and eh is {@link exp}(x).
 */
export function expSplit(x: number): number {
  EXP_TAIL[0] = 0;
  if (!(x <= OVERFLOW)) return x !== x ? x : Infinity;
  if (x < UNDERFLOW) return 0;
  const kf = Math.round(x * INV_STEP);
  const rh = x - kf * STEP_HI;
  const rl = -kf * STEP_LO;
  const r = rh + rl;
  const p = rh + (rl + r * r * (C2 + r * (C3 + r * (C4 + r * (C5 + r * (C6 + r * C7))))));
  const k = kf | 0;
  const j = k & (EXP_TABLE_SIZE - 1);
  const m = (k - j) / EXP_TABLE_SIZE;
  const hi = POW2_HI[j];
  const lo = POW2_LO[j];
  const tail = lo + (hi + lo) * p;
  if (m < -1022 || m > 1023) return scale(hi + tail, m);
  const f = POW2[1074 + m];
  const a = hi * f; // exact, as is b below: f is a normal power of two
  const b = tail * f;
  const eh = a + b; // = exp(x)
  EXP_TAIL[0] = b - (eh - a); // Fast2Sum's exact rounding error (|a| ≥ |b|)
  return eh;
}

/** eˣ with error ≤ 0.52 ulp for normal results (Tang 1989's bound for this scheme); exact specials. */
export function exp(x: number): number {
  if (!(x <= OVERFLOW)) return x !== x ? x : Infinity; // NaN stays NaN
  if (x < UNDERFLOW) return 0;
  const kf = Math.round(x * INV_STEP);
  const rh = x - kf * STEP_HI; // exact: kf·STEP_HI has ≤ 53 bits and lies within a factor 2 of x
  const rl = -kf * STEP_LO;
  const r = rh + rl;
  const p = rh + (rl + r * r * (C2 + r * (C3 + r * (C4 + r * (C5 + r * (C6 + r * C7)))))); // eʳ − 1
  const k = kf | 0;
  const j = k & (EXP_TABLE_SIZE - 1);
  const m = (k - j) / EXP_TABLE_SIZE;
  const hi = POW2_HI[j];
  const lo = POW2_LO[j];
  return scale(hi + (lo + (hi + lo) * p), m);
}

/**
 * eˣ − 1 without cancellation near 0 as an unevaluated sum like {@link expSplit}: the high part
 * (= {@link expm1}(x)) returned, its rounding error written to {@link EXP_TAIL}[0]. Same
 * reduction as exp; for |x| ≤ ln2/64 the polynomial itself is eˣ − 1, otherwise
 * 2ᵐ·2^(j/32)_hi − 1 is formed exactly (Knuth's TwoSum) before the small parts are added.
 */
export function expm1Split(x: number): number {
  EXP_TAIL[0] = 0;
  if (!(x <= OVERFLOW)) return x !== x ? x : Infinity;
  if (x < EXPM1_MINUS_ONE) return -1;
  if (x === 0) return x; // keeps −0
  const kf = Math.round(x * INV_STEP);
  const rh = x - kf * STEP_HI;
  const rl = -kf * STEP_LO;
  const r = rh + rl;
  const q = r * r * (C2 + r * (C3 + r * (C4 + r * (C5 + r * (C6 + r * C7)))));
  const k = kf | 0;
  if (k === 0) {
    // |x| ≤ ln2/64: r = x exactly and eˣ − 1 = x + q
    const h = x + q;
    EXP_TAIL[0] = q - (h - x);
    return h;
  }
  const j = k & (EXP_TABLE_SIZE - 1);
  const m = (k - j) / EXP_TABLE_SIZE;
  if (m > 1020) return exp(x); // eˣ − 1 rounds to eˣ here, and 2ᵐ·2^(j/32) may overflow alone
  // eˣ = eh + el with eh = 2ᵐ·2^(j/32)_hi exact (x ≥ −38 gives m ≥ −55: no underflow).
  const hi = POW2_HI[j];
  const lo = POW2_LO[j];
  const f = POW2[1074 + m];
  const eh = hi * f;
  const el = (lo + (hi + lo) * (rh + (rl + q))) * f;
  // (eh − 1) with its rounding error (Knuth's TwoSum), then the small parts.
  const s = eh - 1;
  const bb = s - eh;
  const err = (eh - (s - bb)) + (-1 - bb);
  const t = err + el;
  const h = s + t;
  EXP_TAIL[0] = t - (h - s); // |s| ≥ |t| here
  return h;
}

/** eˣ − 1 without cancellation near 0 (the high part of {@link expm1Split}). */
export function expm1(x: number): number {
  return expm1Split(x);
}
