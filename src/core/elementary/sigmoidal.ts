/**
 * The S-shaped functions of the network core — tanh, the logistic sigmoid and softplus —
 * built on the engine-independent {@link exp}, {@link expm1} and {@link log1p} of `fdlibm.ts`,
 * with the final quotient rounded once (`compensated.ts`), so the result carries the error of
 * the inner exponential and one rounding, not three.
 */
import stdlibTanh from '@stdlib/math-base-special-tanh';
import { divideByPair, sumError } from './compensated';
import { exp, expm1, log1p } from './fdlibm';

/** Below this |x| tanh uses the rational fit of Cephes (Moshier 1989, via stdlib-js): no exponential. */
const TANH_RATIONAL = 0.625;
/** From here on tanh(x) rounds to ±1: 1 − tanh(19.1) < 2⁻⁵⁴ (fdlibm uses the same cut at 22). */
const TANH_ONE = 22;

/**
 * Hyperbolic tangent. |x| < 0.625: Cephes' x + x³·P(x²)/Q(x²); otherwise, with e = expm1(2|x|),
 * tanh|x| = e/(e + 2) (the identity fdlibm's `s_tanh.c` uses), the quotient rounded once;
 * |x| ≥ 22 gives ±1. Odd, keeps −0, NaN in → NaN out.
 */
export function tanh(x: number): number {
  const z = x < 0 ? -x : x;
  if (z < TANH_RATIONAL) return stdlibTanh(x);
  if (!(z < TANH_ONE)) return z !== z ? x : x < 0 ? -1 : 1;
  const e = expm1(2 * z);
  const s = e + 2; // e ≥ expm1(1.25) > 2, so Fast2Sum's order holds
  const t = divideByPair(e, s, sumError(e, 2, s));
  return x < 0 ? -t : t;
}

/**
 * Logistic sigmoid σ(x) = 1/(1 + e⁻ˣ), without overflow for either sign: x ≥ 0 as 1/(1 + e⁻ˣ),
 * x < 0 as eˣ/(1 + eˣ), the sum kept in two parts and the quotient rounded once.
 */
export function sigmoid(x: number): number {
  if (x >= 0) {
    const e = exp(-x);
    const s = 1 + e;
    return divideByPair(1, s, sumError(1, e, s));
  }
  if (x < 0) {
    const e = exp(x);
    const s = 1 + e;
    return divideByPair(e, s, sumError(1, e, s));
  }
  return x; // NaN
}

/** Softplus log(1 + eˣ) in the log1p form max(x, 0) + log1p(e^(−|x|)), finite for every finite x. */
export function softplus(x: number): number {
  return x > 0 ? x + log1p(exp(-x)) : log1p(exp(x));
}
