/**
 * The verdicts the curvature readout states in words: whether one measured learning rate is
 * stable on the local quadratic model, and whether a sharpness trace crossed the stability limit
 * (and where first). Decided here, once, so every view (the cell, the decision record, the CLI)
 * says the same; views only draw the result.
 *
 * The rule: η is stable on the quadratic model when η / (largest stable η) < 1 (gradient descent
 * η < 2/λmax, Nocedal & Wright, *Numerical Optimization*, 2nd ed., 2006, ch. 3; heavy ball
 * 2(1 + μ)/λmax, Polyak 1964; the other optimizers' forms in `stability.ts`). A trace point is
 * above its limit when its sharpness exceeds the largest sharpness its learning rate tolerates.
 */
import type { StabilityBound } from './stability';

/** Verdict on one measured learning rate. */
export type StabilityVerdict = 'stable' | 'unstable' | 'not-applicable';

/** One sharpness measurement as the trace verdict reads it (the worker's points satisfy it). */
export interface TracePoint {
  step: number;
  sharpness: number;
  /** The largest sharpness the learning rate in effect tolerates, or null when no rule applies. */
  limit: number | null;
}

/** Verdict on a sharpness trace. */
export type TraceVerdict =
  /** No point has a limit (the optimizer picks its own step, or no preconditioner yet). */
  | { kind: 'no-limit'; measured: number }
  /** Every point with a limit stayed at or below it. */
  | { kind: 'within'; measured: number; from: number; to: number }
  /** The first point above its limit. */
  | { kind: 'crossed'; measured: number; step: number; sharpness: number; limit: number };

/** The verdict on a stability bound: stable below a margin of 1, unstable at or above it. */
export function stabilityVerdict(bound: Pick<StabilityBound, 'margin'>): StabilityVerdict {
  if (bound.margin === null || !Number.isFinite(bound.margin)) return 'not-applicable';
  return bound.margin < 1 ? 'stable' : 'unstable';
}

/** A number in a sentence: six significant digits (what the cell shows elsewhere), exponent form outside [1e-3, 1e6). */
function num(x: number): string {
  if (Number.isNaN(x)) return 'NaN';
  if (!Number.isFinite(x)) return x > 0 ? '∞' : '−∞';
  if (x !== 0 && (Math.abs(x) < 1e-3 || Math.abs(x) >= 1e6)) return x.toExponential(3);
  return String(Number(x.toPrecision(6)));
}

/**
 * The sentence the curvature readout shows for one measurement: the learning rate, the formula
 * and value of the largest stable rate, their ratio and the verdict.
 */
export function stabilitySentence(bound: Pick<StabilityBound, 'margin' | 'lr' | 'largestStableLr' | 'formula'>): string {
  const v = stabilityVerdict(bound);
  const verdict =
    v === 'not-applicable' ? 'the rule does not apply to this optimizer'
      : v === 'stable' ? 'stable on the local quadratic model'
        : 'UNSTABLE on the local quadratic model: the sharpest directions grow each step';
  if (bound.largestStableLr === null) return `Step-size limit: ${verdict}.`;
  if (!Number.isFinite(bound.largestStableLr)) return `η = ${num(bound.lr)}; no positive curvature, so the quadratic model sets no limit: ${verdict}.`;
  return `η = ${num(bound.lr)}; limit ${bound.formula} → largest stable η ≈ ${num(bound.largestStableLr)}; η / limit = ${num(bound.margin as number)}: ${verdict}.`;
}

/**
 * Whether a sharpness (or one Hessian eigenvalue) lies above the largest sharpness its learning
 * rate tolerates: strictly above a finite limit. False when no limit applies or either is NaN.
 */
export function aboveLimit(sharpness: number, limit: number | null): boolean {
  return limit !== null && Number.isFinite(limit) && sharpness > limit;
}

/**
 * The limit line on the plain Hessian's eigenvalues (factor/η), or null when the rule does not
 * apply (line searches, Newton) or bounds the preconditioned matrix instead of the plain Hessian
 * the spectrum shows.
 */
export function eigenvalueLimit(bound: Pick<StabilityBound, 'preconditioned' | 'sharpnessLimit'>): number | null {
  return bound.preconditioned ? null : bound.sharpnessLimit;
}

/** Per eigenvalue, whether it lies above the limit line of {@link eigenvalueLimit}. */
export function eigenvaluesAbove(values: readonly number[], bound: Pick<StabilityBound, 'preconditioned' | 'sharpnessLimit'>): boolean[] {
  const limit = eigenvalueLimit(bound);
  return values.map((v) => aboveLimit(v, limit));
}

/** The verdict on a sharpness trace (points in step order). */
export function traceVerdict(points: readonly TracePoint[]): TraceVerdict {
  const limited = points.filter((p) => p.limit !== null && Number.isFinite(p.limit));
  if (limited.length === 0) return { kind: 'no-limit', measured: points.length };
  const over = limited.find((p) => aboveLimit(p.sharpness, p.limit));
  if (over !== undefined) return { kind: 'crossed', measured: limited.length, step: over.step, sharpness: over.sharpness, limit: over.limit as number };
  return { kind: 'within', measured: limited.length, from: limited[0].step, to: limited[limited.length - 1].step };
}

/** The sentence the sharpness trace shows for its verdict. */
export function traceSentence(v: TraceVerdict): string {
  switch (v.kind) {
    case 'no-limit':
      return `${v.measured} sharpness measurement${v.measured === 1 ? '' : 's'}; no learning-rate limit applies to this optimizer at these steps, so there is nothing to cross.`;
    case 'within':
      return v.measured === 1
        ? `At the one measurement with a limit (step ${v.from}) the sharpness stayed below the stability limit.`
        : `Over ${v.measured} measurements with a limit (steps ${v.from}–${v.to}) the sharpness stayed below the stability limit.`;
    case 'crossed':
      return `The sharpness crossed the stability limit at step ${v.step} (${num(v.sharpness)} > ${num(v.limit)}).`;
    default: {
      const never: never = v;
      throw new Error(`unknown trace verdict ${JSON.stringify(never)}`);
    }
  }
}
