/**
 * Strong-Wolfe line search: bracketing phase, then zoom (Nocedal & Wright, Numerical
 * Optimization 2nd ed., 2006, alg. 3.5 and 3.6), with cubic interpolation from values and
 * slopes at both ends (N&W eq. 3.59). The accepted step α satisfies
 *   φ(α) ≤ φ(0) + c1·α·φ′(0)   and   |φ′(α)| ≤ c2·|φ′(0)|.
 *
 * Details follow torch.optim.LBFGS's `_strong_wolfe` (PyTorch 1.13) where the book leaves a
 * choice, so one L-BFGS iteration can be compared with torch's step by step: extrapolation
 * by cubic interpolation clamped to [α + 0.01(α − α_prev), 10α]; the "no decrease" test of
 * the bracketing phase only from the third trial on; in zoom, a trial closer than 10 % of the
 * bracket to an end is moved to 10 % from it when the previous trial made little progress; the
 * search stops when the bracket is narrower than `minWidth`; at most `maxEvaluations` trials.
 */
import type { LineResult, ValueSlope } from './types';

/** Options of {@link strongWolfe}. */
export interface WolfeOptions {
  /** Sufficient-decrease constant (default 1e-4; N&W §3.1). */
  c1?: number;
  /** Curvature constant (default 0.9 for quasi-Newton; use 0.1 for nonlinear CG; N&W §3.1). */
  c2?: number;
  /** Trials allowed (default 25, as torch). */
  maxEvaluations?: number;
  /** Stop zooming when the bracket is narrower than this (in α units; default 1e-9). */
  minWidth?: number;
}

/** Result of {@link strongWolfe}; `slope` is φ′ at the accepted step. */
export interface WolfeResult extends LineResult {
  slope: number;
  /** True when both strong-Wolfe conditions hold at `step`. */
  satisfied: boolean;
}

/**
 * Minimizer of the cubic through (x1, f1, g1) and (x2, f2, g2), clamped to [lo, hi]
 * (default: the interval between x1 and x2); the midpoint when the cubic has no minimum.
 * Formula: N&W eq. 3.59.
 */
export function cubicMinimizer(x1: number, f1: number, g1: number, x2: number, f2: number, g2: number, lo?: number, hi?: number): number {
  const low = lo ?? Math.min(x1, x2);
  const high = hi ?? Math.max(x1, x2);
  const d1 = g1 + g2 - (3 * (f1 - f2)) / (x1 - x2);
  const disc = d1 * d1 - g1 * g2;
  if (!(disc >= 0)) return (low + high) / 2;
  const d2 = Math.sqrt(disc);
  const m = x1 <= x2 ? x2 - (x2 - x1) * ((g2 + d2 - d1) / (g2 - g1 + 2 * d2)) : x1 - (x1 - x2) * ((g1 + d2 - d1) / (g1 - g2 + 2 * d2));
  if (Number.isNaN(m)) return (low + high) / 2;
  return Math.min(Math.max(m, low), high);
}

/**
 * Strong-Wolfe search for φ(α) from α = t0, given φ(0) = f0 and φ′(0) = g0 < 0.
 * `phi(α)` returns value and slope at α.
 */
export function strongWolfe(phi: (alpha: number) => ValueSlope, f0: number, g0: number, t0: number, opts: WolfeOptions = {}): WolfeResult {
  const c1 = opts.c1 ?? 1e-4;
  const c2 = opts.c2 ?? 0.9;
  const maxEvaluations = opts.maxEvaluations ?? 25;
  const minWidth = opts.minWidth ?? 1e-9;
  if (!(g0 < 0)) throw new Error(`strong-Wolfe search needs a descent direction (φ′(0) < 0), got φ′(0) = ${g0}`);

  let t = t0;
  let cur = phi(t);
  let evaluations = 1;
  let tPrev = 0;
  let fPrev = f0;
  let gPrev = g0;
  // bracket [lo, hi] as two points with values and slopes; `done` when t already satisfies Wolfe
  let ax = 0, af = f0, ag = g0, bx = t, bf = cur.value, bg = cur.slope;
  let done = false;
  let trials = 0;
  let bracketed = false;
  while (trials < maxEvaluations) {
    if (cur.value > f0 + c1 * t * g0 || (trials > 1 && cur.value >= fPrev)) {
      ax = tPrev; af = fPrev; ag = gPrev; bx = t; bf = cur.value; bg = cur.slope;
      bracketed = true;
      break;
    }
    if (Math.abs(cur.slope) <= -c2 * g0) {
      ax = t; af = cur.value; ag = cur.slope;
      done = true;
      break;
    }
    if (cur.slope >= 0) {
      ax = tPrev; af = fPrev; ag = gPrev; bx = t; bf = cur.value; bg = cur.slope;
      bracketed = true;
      break;
    }
    const next = cubicMinimizer(tPrev, fPrev, gPrev, t, cur.value, cur.slope, t + 0.01 * (t - tPrev), t * 10);
    tPrev = t;
    fPrev = cur.value;
    gPrev = cur.slope;
    t = next;
    cur = phi(t);
    evaluations++;
    trials++;
  }
  if (!done && !bracketed) {
    // out of trials while still extrapolating: keep the better of 0 and the last trial
    return f0 <= cur.value
      ? { step: 0, value: f0, slope: g0, evaluations, satisfied: false }
      : { step: t, value: cur.value, slope: cur.slope, evaluations, satisfied: false };
  }
  if (done) return { step: ax, value: af, slope: ag, evaluations, satisfied: true };

  // zoom: (ax, bx) with `low` the end with the smaller value
  let lowIsA = af <= bf;
  let insufficient = false;
  let satisfied = false;
  while (trials < maxEvaluations) {
    if (Math.abs(bx - ax) < minWidth) break;
    let tz = cubicMinimizer(ax, af, ag, bx, bf, bg);
    const lo = Math.min(ax, bx);
    const hi = Math.max(ax, bx);
    const margin = 0.1 * (hi - lo);
    if (Math.min(hi - tz, tz - lo) < margin) {
      if (insufficient || tz >= hi || tz <= lo) {
        tz = Math.abs(tz - hi) < Math.abs(tz - lo) ? hi - margin : lo + margin;
        insufficient = false;
      } else {
        insufficient = true;
      }
    } else {
      insufficient = false;
    }
    const z = phi(tz);
    evaluations++;
    trials++;
    const lowF = lowIsA ? af : bf;
    if (z.value > f0 + c1 * tz * g0 || z.value >= lowF) {
      // new point becomes the high end
      if (lowIsA) { bx = tz; bf = z.value; bg = z.slope; } else { ax = tz; af = z.value; ag = z.slope; }
      lowIsA = af <= bf;
    } else {
      if (Math.abs(z.slope) <= -c2 * g0) {
        satisfied = true;
      } else if (z.slope * (lowIsA ? bx - ax : ax - bx) >= 0) {
        // old low becomes the high end
        if (lowIsA) { bx = ax; bf = af; bg = ag; } else { ax = bx; af = bf; ag = bg; }
      }
      if (lowIsA) { ax = tz; af = z.value; ag = z.slope; } else { bx = tz; bf = z.value; bg = z.slope; }
      if (satisfied) break;
    }
  }
  return lowIsA
    ? { step: ax, value: af, slope: ag, evaluations, satisfied }
    : { step: bx, value: bf, slope: bg, evaluations, satisfied };
}
