/**
 * The S-shaped functions of the network core — tanh, the logistic sigmoid and softplus —
 * built on the engine-independent {@link exp} and {@link expm1} of `exp.ts` and {@link log1p} of `log.ts`,
 * with the final quotient rounded once (`compensated.ts`), so the result carries the error of
 * the inner exponential and one rounding, not three.
 */
import * as compensated from './compensated';
import * as exponential from './exp';
import * as logarithm from './log';

// Bound once: in CommonJS builds (jest, tsx) an imported binding is a getter reached on every call.
const { divideByPair, sumError } = compensated;
const { expSplit, expm1Split, EXP_TAIL } = exponential;
const { log1p } = logarithm;

/** Below this |x|, tanh x rounds to x: x²/3 < 2⁻⁵⁵ (Taylor series x − x³/3 + …). */
const TANH_LINEAR = 1 / 134217728; // 2⁻²⁷
/** From here on tanh(x) rounds to ±1: 1 − tanh(19.1) < 2⁻⁵⁴ (fdlibm uses the same cut at 22). */
const TANH_ONE = 22;

/**
 * Hyperbolic tangent tanh|x| = e/(e + 2) with e = expm1(2|x|) (the identity fdlibm's
 * `s_tanh.c` uses), e carried in two parts and the quotient rounded once; |x| < 2⁻²⁷ gives x,
 * |x| ≥ 22 gives ±1. Odd, keeps −0, NaN in → NaN out.
 */
export function tanh(x: number): number {
  const z = x < 0 ? -x : x;
  if (z < TANH_LINEAR) return x;
  if (!(z < TANH_ONE)) return z !== z ? x : x < 0 ? -1 : 1;
  const eh = expm1Split(2 * z);
  const el = EXP_TAIL[0];
  const s = eh + 2;
  const bb = s - eh;
  const sl = (eh - (s - bb)) + (2 - bb) + el; // TwoSum: eh may be below or above 2
  const t = divideByPair(eh, el, s, sl);
  return x < 0 ? -t : t;
}

/**
 * Logistic sigmoid σ(x) = 1/(1 + e⁻ˣ), without overflow for either sign: x ≥ 0 as 1/(1 + e⁻ˣ),
 * x < 0 as eˣ/(1 + eˣ), with the exponential and the sum kept in two parts and the quotient
 * rounded once.
 */
export function sigmoid(x: number): number {
  if (x >= 0) {
    const eh = expSplit(-x);
    const s = 1 + eh;
    return divideByPair(1, 0, s, sumError(1, eh, s) + EXP_TAIL[0]);
  }
  if (x < 0) {
    const eh = expSplit(x);
    const el = EXP_TAIL[0];
    const s = 1 + eh;
    return divideByPair(eh, el, s, sumError(1, eh, s) + el);
  }
  return x; // NaN
}

/**
 * Softplus log(1 + eˣ) in the log1p form max(x, 0) + log1p(e^(−|x|)), finite for every finite x;
 * the exponential's low part enters as log1p(eh + el) ≈ log1p(eh) + el/(1 + eh).
 */
export function softplus(x: number): number {
  const eh = expSplit(x > 0 ? -x : x);
  const l = log1p(eh) + EXP_TAIL[0] / (1 + eh);
  return x > 0 ? x + l : l;
}
