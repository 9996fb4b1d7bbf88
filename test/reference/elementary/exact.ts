/**
 * Measuring a double against an arbitrary-precision reference (decimal.js): the exact
 * decimal value of a double, the unit in the last place of the double nearest a real number,
 * and the error of a computed double in those units.
 */
import Decimal from 'decimal.js';

/** Working precision (significant decimal digits) of the references: far beyond double's 17. */
export const DIGITS = 40;
/** decimal.js at {@link DIGITS}; references needing more clone it with a higher precision. */
export const D = Decimal.clone({ precision: DIGITS, rounding: Decimal.ROUND_HALF_EVEN, toExpNeg: -9e15, toExpPos: 9e15, minE: -9e15, maxE: 9e15 });
export type Dec = InstanceType<typeof D>;

const f64 = new Float64Array(1);
const u32 = new Uint32Array(f64.buffer);
/** Exact powers of two (1080 decimal digits hold 2⁻¹⁰⁷⁴ exactly). */
const P2 = Decimal.clone({ precision: 1100, toExpNeg: -9e15, toExpPos: 9e15, minE: -9e15, maxE: 9e15 });
const pow2Cache = new Map<number, Dec>();

/** 2ᵏ in {@link D} (exact when k ≥ −1074 fits the precision asked; cached). */
export function pow2(k: number): Dec {
  let v = pow2Cache.get(k);
  if (v === undefined) {
    v = new D(new P2(2).pow(k).toString());
    pow2Cache.set(k, v);
  }
  return v;
}

/** Significand and exponent of a finite double: x = m·2ᵉ exactly, m an integer. */
export function decompose(x: number): { m: bigint; e: number } {
  f64[0] = x;
  const hi = u32[1];
  const lo = u32[0];
  const be = (hi >>> 20) & 0x7ff;
  let m = BigInt(hi & 0xfffff) * 4294967296n + BigInt(lo);
  if (be !== 0) m += 4503599627370496n;
  const e = be === 0 ? -1074 : be - 1075;
  return { m: x < 0 ? -m : m, e };
}

/** The value of a finite double as a decimal, to {@link DIGITS} digits (exact with a wider class). */
export function exact(x: number, cls: typeof D = D): Dec {
  if (x === 0) return new cls(0);
  const { m, e } = decompose(x);
  if (cls === D) return new D(m.toString()).times(pow2(e));
  return new cls(m.toString()).times(new cls(new P2(2).pow(e).toString()));
}

/** ulp(E): the spacing of doubles at the real number E (2^(⌊log₂|E|⌋ − 52), at least 2⁻¹⁰⁷⁴). */
export function ulpAt(E: Dec): Dec {
  const a = E.abs();
  if (a.isZero()) return pow2(-1074);
  let k = Math.floor(a.log(2).toNumber());
  while (pow2(k).gt(a)) k--;
  while (pow2(k + 1).lte(a)) k++;
  return pow2(Math.max(k, -1022) - 52);
}

/** |computed − E| in units of ulp(E); Infinity when `computed` is not finite (callers test specials apart). */
export function ulpError(computed: number, E: Dec): number {
  if (!Number.isFinite(computed)) return Infinity;
  return exact(computed).minus(E).abs().div(ulpAt(E)).toNumber();
}
