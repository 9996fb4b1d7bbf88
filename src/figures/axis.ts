/**
 * Axis scales and ticks for the SVG renderer (`svg.ts`): data ranges, linear and log mappings
 * from data to pixels, "nice" tick positions (1, 2 or 5 × 10^k) and tick labels written the way
 * the cell's plotly figures write them (powers of ten as 10⁻⁶, never SI prefixes).
 */
import type { AxisLayout } from './trace';

/** A data range along one axis; `lo < hi` always (a single value is widened). */
export interface Range {
  lo: number;
  hi: number;
}

/** A data-to-pixel mapping along one axis, with the ticks to draw. */
export interface Scale {
  type: 'linear' | 'log';
  /** The data range shown (for a log axis, of the values themselves, not their logarithms). */
  range: Range;
  /** Pixel position of a data value, or null when the value cannot be shown (≤ 0 on a log axis, not finite). */
  at(v: number): number | null;
  /** Tick positions (data values) inside the range, increasing. */
  ticks: number[];
}

const SUPERSCRIPT: Record<string, string> = { '-': '⁻', '0': '⁰', '1': '¹', '2': '²', '3': '³', '4': '⁴', '5': '⁵', '6': '⁶', '7': '⁷', '8': '⁸', '9': '⁹' };

/** `10⁻⁶` for exponent −6. */
export function powerOfTen(exponent: number): string {
  return `10${String(exponent).replace(/[-0-9]/g, (c) => SUPERSCRIPT[c])}`;
}

/**
 * A tick label: plain digits between 10⁻³ and 10⁵, otherwise `m×10ᵏ` (or `10ᵏ` for an exact
 * power of ten); `step` is the spacing of the ticks, so labels carry no more digits than needed.
 */
export function tickLabel(v: number, step: number): string {
  if (v === 0) return '0';
  const a = Math.abs(v);
  if (a >= 1e-3 && a < 1e5) {
    const decimals = Math.max(0, Math.min(12, -Math.floor(Math.log10(step) + 1e-9)));
    return v.toFixed(decimals).replace(/^-/, '−');
  }
  const e = Math.floor(Math.log10(a) + 1e-12);
  const m = v / Math.pow(10, e);
  const mant = Number(m.toPrecision(3));
  const sign = v < 0 ? '−' : '';
  return Math.abs(mant) === 1 ? `${sign}${powerOfTen(e)}` : `${String(mant).replace(/^-/, '−')}×${powerOfTen(e)}`;
}

/** The smallest of 1, 2, 5 × 10^k that is at least `raw`. */
export function niceStep(raw: number): number {
  const decade = Math.pow(10, Math.floor(Math.log10(raw)));
  for (const m of [1, 2, 5, 10]) if (m * decade >= raw * (1 - 1e-12)) return m * decade;
  return 10 * decade;
}

/** Multiples of `step` (offset by `start`) inside `range`, at most `max` of them. */
function multiples(range: Range, step: number, start = 0, max = 50): number[] {
  const out: number[] = [];
  const first = Math.ceil((range.lo - start) / step - 1e-9);
  for (let k = first; out.length < max; k++) {
    const v = start + k * step;
    if (v > range.hi + step * 1e-9) break;
    // Snap round-off (0.30000000000000004) to the nearest printable multiple.
    out.push(Number(v.toPrecision(12)));
  }
  return out;
}

/**
 * The data range an axis shows: the finite values (positive ones on a log axis), from 0 when
 * `rangemode` is `tozero`, padded by 5 % on a linear value axis (a log axis by 5 % of its
 * decades); a single value is widened so the range is never empty.
 */
export function dataRange(values: readonly number[], axis: AxisLayout, pad: boolean): Range | null {
  const usable = values.filter((v) => Number.isFinite(v) && (axis.type !== 'log' || v > 0));
  if (usable.length === 0) return null;
  let lo = Infinity;
  let hi = -Infinity;
  for (const v of usable) {
    lo = Math.min(lo, v);
    hi = Math.max(hi, v);
  }
  if (axis.type === 'log') {
    let a = Math.log10(lo);
    let b = Math.log10(hi);
    if (b - a < 1e-9) {
      a -= 0.5;
      b += 0.5;
    } else if (pad) {
      const p = (b - a) * 0.05;
      a -= p;
      b += p;
    }
    // Padding past the largest double would make the range (and a tick loop over its decades) infinite.
    return { lo: Math.max(Math.pow(10, a), Number.MIN_VALUE), hi: Math.min(Math.pow(10, b), Number.MAX_VALUE) };
  }
  if (axis.rangemode === 'tozero') {
    lo = Math.min(0, lo);
    hi = Math.max(0, hi);
  }
  if (hi - lo <= Math.abs(hi) * 1e-12) {
    const w = Math.abs(hi) > 0 ? Math.abs(hi) * 0.1 : 1;
    return { lo: lo - w, hi: hi + w };
  }
  if (pad) {
    const p = (hi - lo) * 0.05;
    return { lo: axis.rangemode === 'tozero' && lo === 0 ? 0 : Math.max(lo - p, -Number.MAX_VALUE), hi: Math.min(hi + p, Number.MAX_VALUE) };
  }
  return { lo, hi };
}

/**
 * A scale mapping `range` onto the pixels from `p0` to `p1` (p1 < p0 for a y axis, whose
 * pixels grow downwards). Linear ticks: the axis's own `dtick` when it states one, else about
 * `target` nice multiples. Log ticks: every power of ten, or 1-2-5 within a decade or two.
 */
export function makeScale(axis: AxisLayout, range: Range, p0: number, p1: number, target = 6): Scale {
  if (axis.type === 'log') {
    const a = Math.log10(range.lo);
    const b = Math.log10(range.hi);
    const at = (v: number): number | null => (Number.isFinite(v) && v > 0 ? p0 + ((Math.log10(v) - a) / (b - a)) * (p1 - p0) : null);
    const decades = b - a;
    const every = Math.max(1, Math.ceil(decades / 8));
    const ticks: number[] = [];
    // Doubles span about 632 decades: the bound keeps a range that is not finite from looping forever.
    for (let e = Math.max(Math.floor(a), -400); e <= Math.min(Math.ceil(b), 400); e++) {
      const mults = decades < 2.5 ? [1, 2, 5] : e % every === 0 ? [1] : [];
      for (const m of mults) {
        const v = m * Math.pow(10, e);
        if (v >= range.lo * (1 - 1e-12) && v <= range.hi * (1 + 1e-12)) ticks.push(v);
      }
    }
    return { type: 'log', range, at, ticks };
  }
  const at = (v: number): number | null => (Number.isFinite(v) ? p0 + ((v - range.lo) / (range.hi - range.lo)) * (p1 - p0) : null);
  let step = niceStep((range.hi - range.lo) / target);
  let start = 0;
  if (axis.tickmode === 'linear' && axis.dtick !== undefined && axis.dtick > 0) {
    step = Math.max(axis.dtick, niceStep((range.hi - range.lo) / 12));
    start = axis.tick0 ?? 0;
  }
  return { type: 'linear', range, at, ticks: multiples(range, step, start) };
}

/** Spacing of a linear scale's ticks (for labels), or 1 when it has fewer than two. */
export function tickStep(scale: Scale): number {
  return scale.ticks.length >= 2 ? scale.ticks[1] - scale.ticks[0] : 1;
}
