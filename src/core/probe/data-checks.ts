/**
 * Data checks of a network setup's training rows: per-feature mean and spread (population
 * standard deviation), constant features, exactly repeated rows, held-out rows that also occur
 * in training, the scale of the features against each other, and the class balance of
 * classification targets. Plain counts and moments: no threshold is applied here except where a
 * field says so (the findings compare with `findings/thresholds.ts`).
 */
import type { DataSetup, LossName } from '../setup';
import { columnMoments } from '../data/standardize';

/** One input column. */
export interface FeatureStats {
  index: number;
  mean: number;
  /** Population standard deviation over the training rows (0 for a constant column). */
  spread: number;
  min: number;
  max: number;
  constant: boolean;
}

/** Class balance of classification targets. */
export type ClassBalance =
  | { kind: 'classes'; counts: number[]; smallestShare: number }
  | { kind: 'binary'; positiveShare: number[] };

/** Result of {@link dataChecks}. */
export interface DataReport {
  rows: number;
  inputs: number;
  heldOutRows: number;
  /** Whether the inputs were standardized by `data.standardize` (the statistics below are then of the standardized inputs). */
  standardized: boolean;
  features: FeatureStats[];
  constantFeatures: number[];
  /** Rows that repeat an earlier row exactly (inputs and targets), and their share of all rows. */
  duplicateRows: number;
  duplicateShare: number;
  /** Rows whose inputs repeat an earlier row's with different targets. */
  conflictingRows: number;
  /** Held-out rows whose inputs also occur among the training rows. */
  heldOutInTraining: number;
  /** Largest over smallest spread of the non-constant features (null with fewer than two). */
  spreadRatio: number | null;
  /** The feature with the largest |mean| / spread, and that ratio (null when every feature is constant). */
  largestOffset: { feature: number; ratio: number } | null;
  /** Class balance (cross-entropy: counts per class; binary cross-entropy: share of 1s per column), else null. */
  classes: ClassBalance | null;
}

/** A row's exact bit pattern as a map key (so 0.1 + 0.2 and 0.3 differ, as they do for the model). */
function rowKey(a: Float64Array, from: number, width: number): string {
  let s = '';
  for (let i = 0; i < width; i++) s += `${a[from + i]},`;
  return s;
}

/**
 * The data checks of a data set.
 *
 * @param outputs - the network's output width (class count for cross-entropy).
 */
export function dataChecks(data: DataSetup, loss: LossName, outputs: number): DataReport {
  const { rows, inputs, targets } = data;
  const m = columnMoments(data.x, rows, inputs);
  const features: FeatureStats[] = [];
  for (let j = 0; j < inputs; j++) {
    let lo = Infinity;
    let hi = -Infinity;
    for (let r = 0; r < rows; r++) {
      const v = data.x[r * inputs + j];
      if (v < lo) lo = v;
      if (v > hi) hi = v;
    }
    features.push({ index: j, mean: m.mean[j], spread: m.spread[j], min: lo, max: hi, constant: m.constant.includes(j) });
  }
  const seenRows = new Set<string>();
  const seenX = new Map<string, string>();
  let duplicateRows = 0;
  let conflictingRows = 0;
  for (let r = 0; r < rows; r++) {
    const kx = rowKey(data.x, r * inputs, inputs);
    const ky = rowKey(data.y, r * targets, targets);
    const full = `${kx}|${ky}`;
    if (seenRows.has(full)) duplicateRows++;
    else {
      const prior = seenX.get(kx);
      if (prior !== undefined && prior !== ky) conflictingRows++;
      seenRows.add(full);
      if (prior === undefined) seenX.set(kx, ky);
    }
  }
  let heldOutInTraining = 0;
  const h = data.heldOut;
  if (h) for (let r = 0; r < h.rows; r++) if (seenX.has(rowKey(h.x, r * inputs, inputs))) heldOutInTraining++;
  const varying = features.filter((f) => !f.constant);
  const spreads = varying.map((f) => f.spread);
  const spreadRatio = spreads.length >= 2 ? Math.max(...spreads) / Math.min(...spreads) : null;
  let largestOffset: DataReport['largestOffset'] = null;
  for (const f of varying) {
    const ratio = Math.abs(f.mean) / f.spread;
    if (largestOffset === null || ratio > largestOffset.ratio) largestOffset = { feature: f.index, ratio };
  }
  let classes: ClassBalance | null = null;
  if (loss === 'cross-entropy') {
    const counts = new Array<number>(outputs).fill(0);
    for (let r = 0; r < rows; r++) {
      const c = data.y[r];
      if (Number.isInteger(c) && c >= 0 && c < outputs) counts[c]++;
    }
    classes = { kind: 'classes', counts, smallestShare: Math.min(...counts) / rows };
  } else if (loss === 'binary-cross-entropy') {
    const positiveShare = Array.from({ length: targets }, (_, j) => {
      let s = 0;
      for (let r = 0; r < rows; r++) s += data.y[r * targets + j];
      return s / rows;
    });
    classes = { kind: 'binary', positiveShare };
  }
  return {
    rows, inputs, heldOutRows: h?.rows ?? 0, standardized: data.standardized !== undefined, features,
    constantFeatures: [...m.constant], duplicateRows, duplicateShare: duplicateRows / rows, conflictingRows,
    heldOutInTraining, spreadRatio, largestOffset, classes,
  };
}
