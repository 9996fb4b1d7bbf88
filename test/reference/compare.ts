/**
 * Comparison used by every reference test: ‖a − b‖₂ / ‖b‖₂ with b the outside reference
 * (Infinity when the lengths differ, so a shape mismatch can never pass).
 */
export function relErr(a: ArrayLike<number>, b: ArrayLike<number>): number {
  if (a.length !== b.length) return Infinity;
  let d = 0;
  let m = 0;
  for (let i = 0; i < b.length; i++) {
    d += (a[i] - b[i]) ** 2;
    m += b[i] ** 2;
  }
  return Math.sqrt(d) / Math.max(Math.sqrt(m), 1e-300);
}
