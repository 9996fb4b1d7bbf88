/**
 * Precision tolerance: the loss (and, for classification, the accuracy) with every weight and
 * bias rounded to k significant bits, round-to-nearest, ties to even (IEEE 754-2019 §4.3.1), the
 * arithmetic itself staying float64. k = 24 is float32's significand, 11 float16's, 8 bfloat16's
 * (IEEE 754-2019 Table 3.5; bfloat16 from memory); the exponent range stays float64's, so this
 * measures the storage precision of the weights alone, not overflow or a low-precision forward
 * pass. A small proxy model tolerating rounding says little about a large one.
 */
import type { Objective, Rows } from '../objective';
import type { LossName } from '../setup';

/** Bit counts the readout uses by default. */
export const PRECISION_BITS: readonly number[] = [16, 10, 8, 6, 4];

const buf = new DataView(new ArrayBuffer(8));

/** 2^e for an integer e in the normal range [−1022, 1023], built from its bits (exact in every engine). */
function pow2(e: number): number {
  buf.setUint32(0, (e + 1023) << 20);
  buf.setUint32(4, 0);
  return buf.getFloat64(0);
}

/** The unbiased binary exponent of a finite non-zero x (subnormals: their effective exponent). */
function exponentOf(x: number): number {
  buf.setFloat64(0, Math.abs(x));
  const biased = (buf.getUint32(0) >>> 20) & 0x7ff;
  if (biased > 0) return biased - 1023;
  // subnormal: scale into the normal range first
  buf.setFloat64(0, Math.abs(x) * pow2(64));
  return ((buf.getUint32(0) >>> 20) & 0x7ff) - 1023 - 64;
}

/** Rounds an integer-and-fraction y (|y| < 2^53) to the nearest integer, ties to even. */
function roundHalfEven(y: number): number {
  const f = Math.floor(y);
  const d = y - f; // exact: y and f share an exponent range
  if (d > 0.5) return f + 1;
  if (d < 0.5) return f;
  return f % 2 === 0 ? f : f + 1;
}

/**
 * x rounded to k significant bits (1 ≤ k ≤ 53), nearest, ties to even: with e the exponent of x,
 * x·2^{k−1−e} lies in [2^{k−1}, 2^k), is rounded to an integer and scaled back (each scaling by a
 * power of two is exact). Zero, ±∞ and NaN are returned unchanged.
 */
export function roundToBits(x: number, k: number): number {
  if (!Number.isInteger(k) || k < 1 || k > 53) throw new RangeError(`bits must be an integer from 1 to 53, got ${k}`);
  if (x === 0 || !Number.isFinite(x) || k === 53) return x;
  const e = exponentOf(x);
  const shift = k - 1 - e;
  // Split the scaling in two so neither factor leaves the normal range.
  const half = Math.trunc(shift / 2);
  const scaled = x * pow2(half) * pow2(shift - half);
  const r = roundHalfEven(scaled);
  return r * pow2(-half) * pow2(-(shift - half));
}

/** A copy of `w` with every entry rounded to k significant bits. */
export function roundWeights(w: Float64Array, k: number): Float64Array {
  return Float64Array.from(w, (x) => roundToBits(x, k));
}

/** One row of the readout. */
export interface PrecisionRow {
  /** Significant bits kept (53 = the float64 weights themselves). */
  bits: number;
  loss: number;
  /** Loss change against the float64 weights. */
  lossChange: number;
  /** Share of rows classified correctly (classification losses only). */
  accuracy?: number;
  /** Largest relative change of any weight by the rounding. */
  maxRelativeChange: number;
}

/** The readout at one step. */
export interface PrecisionReadout {
  step: number;
  rows: PrecisionRow[];
}

/** Something that maps weights to outputs (the network's `predict`). */
export interface Predictor {
  predict(w: Float64Array, rows?: Rows): Float64Array;
  readonly outputs: number;
}

/**
 * Share of correct predictions: cross-entropy — the arg-max logit equals the class index;
 * binary-cross-entropy — a logit > 0 against a target ≥ 0.5, per output; undefined for mse.
 */
export function accuracy(out: Float64Array, y: Float64Array, k: number, loss: LossName): number | undefined {
  switch (loss) {
    case 'mse':
      return undefined;
    case 'cross-entropy': {
      const n = out.length / k;
      let right = 0;
      for (let i = 0; i < n; i++) {
        let best = 0;
        for (let j = 1; j < k; j++) if (out[i * k + j] > out[i * k + best]) best = j;
        if (best === y[i]) right++;
      }
      return right / n;
    }
    case 'binary-cross-entropy': {
      let right = 0;
      for (let i = 0; i < out.length; i++) if ((out[i] > 0) === (y[i] >= 0.5)) right++;
      return right / out.length;
    }
    case 'expression': // the user's term: no notion of a class
      return undefined;
    default: {
      const never: never = loss;
      throw new Error(`unknown loss '${String(never)}'`);
    }
  }
}

/**
 * Loss (and accuracy) at `w` and at `w` rounded to each of `bits`.
 * @param classify predictor, targets and loss for the accuracy column (omit for regression or analytic objectives)
 */
export function precisionReadout(objective: Objective, w: Float64Array, step: number, bits: readonly number[] = PRECISION_BITS,
  classify?: { predictor: Predictor; y: Float64Array; loss: LossName }): PrecisionReadout {
  const base = objective.value(w);
  const row = (k: number, v: Float64Array): PrecisionRow => {
    const loss = objective.value(v);
    let maxRel = 0;
    for (let i = 0; i < w.length; i++) if (w[i] !== 0) maxRel = Math.max(maxRel, Math.abs(v[i] - w[i]) / Math.abs(w[i]));
    const r: PrecisionRow = { bits: k, loss, lossChange: loss - base, maxRelativeChange: maxRel };
    if (classify) {
      const acc = accuracy(classify.predictor.predict(v), classify.y, classify.predictor.outputs, classify.loss);
      if (acc !== undefined) r.accuracy = acc;
    }
    return r;
  };
  return { step, rows: [row(53, w), ...bits.map((k) => row(k, roundWeights(w, k)))] };
}
