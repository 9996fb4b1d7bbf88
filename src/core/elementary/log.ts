/**
 * Natural logarithm and log(1 + x), by the reduction of fdlibm's `e_log.c` / `s_log1p.c`
 * (Sun Microsystems, 1993): u = 2ᵏ·m with m in [√2/2, √2), f = m − 1 (exact), s = f/(2 + f),
 * and log(1 + f) = f − (f²/2 − s·(f²/2 + R)), where R = 2·atanh(s)/s − 2 = Σ 2s²ⁿ/(2n + 1)
 * (n ≥ 1) is summed from its Taylor series to s²² (|s| ≤ 0.172, truncation below 2⁻⁶⁰
 * relative). log1p forms u = 1 + x with its rounding error c (TwoSum) and adds c/u. The
 * exponent is read from the double's bits through a typed-array view, which every engine
 * reads alike; only +, −, ×, ÷ follow.
 */
import * as tables from './tables';

// Module-local copies (imported bindings may be getters in CommonJS builds).
const LN2_HI = tables.LN2_HI;
const LN2_LO = tables.LN2_LO;

const WORDS = new Float64Array(1);
const HALVES = new Uint32Array(WORDS.buffer);
/** Index of the high 32-bit word of a double in {@link HALVES} (1 on little-endian machines). */
const HIGH = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1 ? 1 : 0;
/** 2⁵⁴, to lift subnormal arguments into the normal range. */
const TWO54 = 18014398509481984;
/** The high word's significand bits of √2 (0x3FF6A09E…): m at or above them is halved. */
const SQRT2_BITS = 0x6a09e;

// Taylor coefficients 2/(2n + 1) of R(z) = Σ 2zⁿ/(2n + 1), z = s².
const A1 = 2 / 3, A2 = 2 / 5, A3 = 2 / 7, A4 = 2 / 9, A5 = 2 / 11, A6 = 2 / 13, A7 = 2 / 15, A8 = 2 / 17, A9 = 2 / 19, A10 = 2 / 21, A11 = 2 / 23;

/** log(u) + corr + k0·ln 2 for a positive normal finite u (corr: a correction far below an ulp of the result). */
function logPositive(u: number, corr: number, k0: number): number {
  WORDS[0] = u;
  const hi = HALVES[HIGH];
  let k = ((hi >>> 20) - 1023) + k0;
  const bits = hi & 0xfffff;
  if (bits < SQRT2_BITS) {
    HALVES[HIGH] = bits | 0x3ff00000; // m in [1, √2)
  } else {
    HALVES[HIGH] = bits | 0x3fe00000; // m in [√2/2, 1)
    k += 1;
  }
  const m = WORDS[0];
  const f = m - 1; // exact (Sterbenz)
  const s = f / (2 + f);
  const z = s * s;
  const w = z * z;
  // Odd and even powers of z in two independent chains (as fdlibm does), for the pipeline.
  const r1 = z * (A1 + w * (A3 + w * (A5 + w * (A7 + w * (A9 + w * A11)))));
  const r2 = w * (A2 + w * (A4 + w * (A6 + w * (A8 + w * A10))));
  const R = r1 + r2;
  const hfsq = 0.5 * f * f;
  return k * LN2_HI - ((hfsq - (s * (hfsq + R) + (k * LN2_LO + corr))) - f);
}

/** Natural logarithm: −∞ at ±0, NaN below 0 and for NaN, +∞ at +∞. */
export function log(x: number): number {
  if (!(x > 0)) return x === 0 ? -Infinity : NaN;
  if (x === Infinity) return x;
  if (x < 2.2250738585072014e-308) return logPositive(x * TWO54, 0, -54); // subnormal
  return logPositive(x, 0, 0);
}

/** log(1 + x) without cancellation near 0: −∞ at −1, NaN below −1 and for NaN, keeps −0. */
export function log1p(x: number): number {
  if (!(x > -1)) return x === -1 ? -Infinity : NaN;
  if (x === Infinity) return x;
  const ax = x < 0 ? -x : x;
  if (ax < 1.862645149230957e-9) {
    // |x| < 2⁻²⁹: log1p x = x − x²/2 + x³/3 − …, and x³/3 is below 2⁻⁵⁸·|x|
    return ax < 5.551115123125783e-17 ? x : x - x * x * 0.5;
  }
  const u = 1 + x;
  const bb = u - x;
  const c = (x - (u - bb)) + (1 - bb); // TwoSum: 1 + x = u + c exactly
  // c/u is the first-order effect of the rounding of u: log(u + c) = log u + c/u + O(c²).
  return logPositive(u, c / u, 0);
}
