/**
 * Bracketing a minimum by downhill expansion with parabolic extrapolation, in the manner of
 * `mnbrak` (Press et al., Numerical Recipes, 3rd ed., §10.1; written from memory of the
 * method): step from a towards b, grow the step by the golden ratio, jump to the vertex of
 * the parabola through the last three points when it lies within `growLimit` steps, until the
 * middle point is lower than both ends.
 */
import { GOLDEN_RATIO, type Bracket } from './types';

/** Options of {@link bracketMinimum}. */
export interface BracketOptions {
  /** Largest parabolic jump, in units of the last step (default 110, as scipy's bracket). */
  growLimit?: number;
  /** Give up after this many evaluations (default 1000). */
  maxEvaluations?: number;
}

const TINY = 1e-21;

/**
 * A bracket (a, b, c) around a local minimum of f, starting from the two points a and b.
 * Throws when no bracket is found within `maxEvaluations` (f unbounded below or flat).
 */
export function bracketMinimum(f: (x: number) => number, a0: number, b0: number, opts: BracketOptions = {}): Bracket {
  const growLimit = opts.growLimit ?? 110;
  const maxEvaluations = opts.maxEvaluations ?? 1000;
  let a = a0;
  let b = b0;
  let fa = f(a);
  let fb = f(b);
  if (fb > fa) {
    [a, b] = [b, a];
    [fa, fb] = [fb, fa];
  }
  let c = b + GOLDEN_RATIO * (b - a);
  let fc = f(c);
  let evaluations = 3;
  while (fc < fb) {
    if (evaluations >= maxEvaluations) {
      throw new Error(`no minimum bracketed after ${evaluations} evaluations (last point ${c}, value ${fc}); the function may be unbounded below along this line`);
    }
    const r = (b - a) * (fb - fc);
    const q = (b - c) * (fb - fa);
    const diff = q - r;
    const denom = 2 * (Math.abs(diff) < TINY ? (diff < 0 ? -TINY : TINY) : diff);
    let u = b - ((b - c) * q - (b - a) * r) / denom;
    const uLimit = b + growLimit * (c - b);
    let fu: number;
    if ((b - u) * (u - c) > 0) {
      // parabola vertex between b and c
      fu = f(u);
      evaluations++;
      if (fu < fc) {
        return order({ a: b, b: u, c, fa: fb, fb: fu, fc, evaluations });
      }
      if (fu > fb) {
        return order({ a, b, c: u, fa, fb, fc: fu, evaluations });
      }
      u = c + GOLDEN_RATIO * (c - b);
      fu = f(u);
      evaluations++;
    } else if ((c - u) * (u - uLimit) > 0) {
      // vertex beyond c but within the limit
      fu = f(u);
      evaluations++;
      if (fu < fc) {
        b = c;
        c = u;
        u = c + GOLDEN_RATIO * (c - b);
        fb = fc;
        fc = fu;
        fu = f(u);
        evaluations++;
      }
    } else if ((u - uLimit) * (uLimit - c) >= 0) {
      u = uLimit;
      fu = f(u);
      evaluations++;
    } else {
      u = c + GOLDEN_RATIO * (c - b);
      fu = f(u);
      evaluations++;
    }
    a = b;
    b = c;
    c = u;
    fa = fb;
    fb = fc;
    fc = fu;
  }
  return order({ a, b, c, fa, fb, fc, evaluations });
}

/** Returns the bracket with a < c (b in between). */
function order(br: Bracket): Bracket {
  if (br.a <= br.c) return br;
  return { a: br.c, b: br.b, c: br.a, fa: br.fc, fb: br.fb, fc: br.fa, evaluations: br.evaluations };
}
