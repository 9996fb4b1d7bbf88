/** Shared records of the one-dimensional line searches. */

/** Outcome of a line search along φ(α) = f(w + α·d). */
export interface LineResult {
  /** The accepted step α. */
  step: number;
  /** φ(step). */
  value: number;
  /** Evaluations of φ (or of φ and φ′ together) the search used. */
  evaluations: number;
}

/** Three points a, b, c (b between a and c) with φ(b) ≤ φ(a) and φ(b) ≤ φ(c). */
export interface Bracket {
  a: number;
  b: number;
  c: number;
  fa: number;
  fb: number;
  fc: number;
  /** Evaluations used to find it. */
  evaluations: number;
}

/** φ and φ′ at one step (strong Wolfe needs both). */
export interface ValueSlope {
  value: number;
  slope: number;
}

/** The golden ratio φ = (1 + √5)/2 and the golden-section fraction (3 − √5)/2 ≈ 0.381966. */
export const GOLDEN_RATIO = (1 + Math.sqrt(5)) / 2;
/** Fraction of the larger interval at which golden section places its next point (Brent 1973). */
export const GOLDEN_FRACTION = (3 - Math.sqrt(5)) / 2;
