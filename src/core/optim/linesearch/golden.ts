/**
 * Golden-section search (Kiefer 1953; Brent 1973 ch. 5; Press et al., Numerical Recipes 3rd ed.
 * §10.2): keep four points x0 < x1 < x2 < x3 with the interior pair at the golden fractions;
 * every evaluation discards one end, so the bracket shrinks by 1/φ ≈ 0.618034 per evaluation.
 */
import { GOLDEN_FRACTION, type Bracket, type LineResult } from './types';

/** Options of {@link goldenSection}. */
export interface GoldenOptions {
  /** Relative tolerance on x: stop when x3 − x0 ≤ tol·(|x1| + |x2|) (default √ε ≈ 1.49e-8). */
  tol?: number;
  /** Evaluation cap (default 5000). */
  maxEvaluations?: number;
  /** When given, receives the bracket width x3 − x0 after every evaluation. */
  widths?: number[];
}

/** Golden-section minimization of f inside a bracket. */
export function goldenSection(f: (x: number) => number, br: Bracket, opts: GoldenOptions = {}): LineResult {
  const tol = opts.tol ?? Math.sqrt(Number.EPSILON);
  const maxEvaluations = opts.maxEvaluations ?? 5000;
  const r = 1 - GOLDEN_FRACTION; // 0.618…
  const { a, b, c } = br;
  let x0 = a;
  let x3 = c;
  let x1: number;
  let x2: number;
  // put the new point into the larger of the two sub-intervals
  if (Math.abs(c - b) > Math.abs(b - a)) {
    x1 = b;
    x2 = b + GOLDEN_FRACTION * (c - b);
  } else {
    x2 = b;
    x1 = b - GOLDEN_FRACTION * (b - a);
  }
  let f1 = x1 === b ? br.fb : f(x1);
  let f2 = x2 === b ? br.fb : f(x2);
  let evaluations = 1;
  while (Math.abs(x3 - x0) > tol * (Math.abs(x1) + Math.abs(x2)) && evaluations < maxEvaluations) {
    if (f2 < f1) {
      x0 = x1;
      x1 = x2;
      x2 = r * x1 + (1 - r) * x3;
      f1 = f2;
      f2 = f(x2);
    } else {
      x3 = x2;
      x2 = x1;
      x1 = r * x2 + (1 - r) * x0;
      f2 = f1;
      f1 = f(x1);
    }
    evaluations++;
    opts.widths?.push(Math.abs(x3 - x0));
  }
  return f1 < f2 ? { step: x1, value: f1, evaluations } : { step: x2, value: f2, evaluations };
}
