/**
 * The elementary functions whose algorithms come from fdlibm (Sun Microsystems ' freely
 * distributable libm, 1993, as carried on by FreeBSD's msun), through stdlib-js's plain
 * JavaScript ports (`@stdlib/math-base-special-*`).
 *
 * Why not `Math.exp`, `Math.log`, …: ECMAScript leaves their results "implementation-
 * approximated", and V8, SpiderMonkey and JavaScriptCore differ in the last bits (Node 20 and
 * current Chromium already do), so a trajectory stepped in one engine would not replay in
 * another. These ports use only IEEE-754 +, −, ×, ÷, integer operations on the words of a
 * double (typed-array views) and the exactly specified `Math.floor`, `ceil`, `abs`, `round`
 * and `sqrt`, so every conforming engine returns the same bits. That claim is checked three
 * ways: by reading the ports (every `Math.` property they reach is one of those), by the test
 * that scans the bundled replay script for engine-dependent calls, and by replaying the same
 * experiments in four engines (`test/reference/engines/`). (exp, expm1, log and log1p, on the
 * hot path, are our own in `exp.ts` and `log.ts`: the ports reach a double's words through
 * several small modules and were two to eight times slower than the engine's functions.)
 *
 * Measured accuracy against decimal.js (`test/reference/elementary/`): see DEVELOPERS.md.
 */
import stdlibCos from '@stdlib/math-base-special-cos';
import stdlibErf from '@stdlib/math-base-special-erf';
import stdlibPow from '@stdlib/math-base-special-pow';
import stdlibSin from '@stdlib/math-base-special-sin';

/** Sine: fdlibm `s_sin.c` (Payne–Hanek / Cody–Waite reduction by π/2, kernels on [−π/4, π/4]). */
export const sin: (x: number) => number = stdlibSin;

/** Cosine: fdlibm `s_cos.c` (same reduction and kernels as {@link sin}). */
export const cos: (x: number) => number = stdlibCos;

/**
 * xʸ: fdlibm `e_pow.c` (log₂x in extra precision, then 2^(y·log₂x)), with ECMAScript's special
 * values (ECMA-262 §6.1.6.1.3) where they differ from C99's, which the port follows:
 * x⁰ = 1 even for NaN x, and (±1)^(±∞) = NaN.
 */
export function pow(x: number, y: number): number {
  if (y === 0) return 1;
  if ((x === 1 || x === -1) && (y === Infinity || y === -Infinity)) return NaN;
  return stdlibPow(x, y);
}

/** Error function (2/√π)∫₀ˣ e^(−t²) dt: fdlibm `s_erf.c` (rational fits on four intervals). */
export const erf: (x: number) => number = stdlibErf;
