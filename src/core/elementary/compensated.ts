/**
 * Error-free transformations of IEEE-754 double arithmetic, without fused multiply-add (which
 * JavaScript does not have and WebAssembly's scalar core lacks): the exact rounding error of a
 * sum (Knuth's TwoSum, TAOCP vol. 2, §4.2.2) and of a product (Dekker 1971 with Veltkamp's
 * splitting). Used to divide by a sum carried in two parts, so a formula like e/(e + 2)
 * is rounded once instead of three times.
 */

/** Veltkamp's splitting constant 2²⁷ + 1 for 53-bit significands. */
const SPLIT = 134217729;

/**
 * (a + al) / (sh + sl) with the quotient's residual folded back in (one Newton correction):
 * q ≈ a/sh, r = a − q·sh computed exactly (Dekker's product), then q + (r + al − q·sl)/sh, both
 * divisions done as products with one reciprocal 1/sh.
 * Accurate to about one rounding when |sl| ≤ ulp(sh) and no intermediate over- or underflows;
 * callers keep their arguments in ranges where that holds.
 * @param a - the numerator's high part
 * @param al - the numerator's low part (0 when the numerator is one double)
 * @param sh - the high part of the denominator
 * @param sl - the low part of the denominator (the rounding error of forming it)
 */
export function divideByPair(a: number, al: number, sh: number, sl: number): number {
  // One division: q need not be the rounded quotient, the correction below repairs it.
  const inv = 1 / sh;
  const q = a * inv;
  // Dekker's exact product q·sh = p + pe.
  const p = q * sh;
  let t = SPLIT * q;
  const qh = t - (t - q);
  const ql = q - qh;
  t = SPLIT * sh;
  const sh1 = t - (t - sh);
  const sh2 = sh - sh1;
  const pe = ((qh * sh1 - p) + qh * sh2 + ql * sh1) + ql * sh2;
  // a − p is exact: p lies within a factor 2 of a (Sterbenz).
  const r = (a - p) - pe + al - q * sl;
  return q + r * inv;
}

/**
 * The rounding error of a + b when |a| ≥ |b| (Dekker's Fast2Sum): (a + b) − s exactly, s = fl(a + b).
 * @param a - the larger addend in magnitude
 * @param b - the smaller addend
 * @param s - fl(a + b)
 */
export function sumError(a: number, b: number, s: number): number {
  return b - (s - a);
}
