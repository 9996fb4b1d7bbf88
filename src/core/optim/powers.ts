/**
 * Integer powers by binary exponentiation (square-and-multiply; Knuth, TAOCP vol. 2, §4.6.3).
 * Only IEEE-754 multiplications are used, which every JavaScript engine rounds identically,
 * so Adam's bias corrections and the step/exponential schedules give the same bits in Node
 * and in a browser; `Math.pow` is not required to be correctly rounded and engines differ.
 * Accuracy: each squaring doubles the relative error already present, so the bound is about
 * n·ε relative (ε = 2⁻⁵²) instead of Math.pow's ≈ ε — for Adam's 1 − βᵗ that is below 1e-13
 * relative at any t (the absolute error t·βᵗ·ε peaks at ε/(e·ln(1/β))), far inside the 1e-10
 * agreement with torch.optim.
 */

/** xⁿ for a non-negative integer n, by square-and-multiply. */
export function powInt(x: number, n: number): number {
  if (!Number.isInteger(n) || n < 0) throw new RangeError(`powInt needs a non-negative integer exponent, got ${n}`);
  let result = 1;
  let base = x;
  let e = n;
  while (e > 0) {
    if (e & 1) result *= base;
    e = Math.floor(e / 2);
    if (e > 0) base *= base;
  }
  return result;
}
