/**
 * Keeping a branch's in-memory trajectory bounded over very long runs, and finding records
 * by step in a thinned (gapped, step-ascending) trajectory.
 */
import type { StepRecord } from '../state';

/** How many records a trajectory may hold in memory. */
export interface TrajectoryBound {
  /** Most records held; past it the trajectory is thinned (at least 2). */
  maxRecords: number;
  /** Newest records always kept at full density (at least 1, below `maxRecords`). */
  recentRecords: number;
}

/** Throws with the field at fault when `b` is not a usable bound. */
export function checkTrajectoryBound(b: TrajectoryBound): void {
  if (!Number.isInteger(b.maxRecords) || b.maxRecords < 2) throw new Error(`maxRecords must be an integer ≥ 2, got ${b.maxRecords}`);
  if (!Number.isInteger(b.recentRecords) || b.recentRecords < 1 || b.recentRecords >= b.maxRecords) {
    throw new Error(`recentRecords must be an integer in [1, ${b.maxRecords - 1}], got ${b.recentRecords}`);
  }
}

/**
 * Thins `records` (step-ascending) in place once they exceed `bound.maxRecords`.
 *
 * 1. Always kept: the first record, the newest `recentRecords` records and every record
 *    whose step is in `keep` (checkpoint steps).
 * 2. Of the others, those whose step is a multiple of a power-of-two stride are kept; the
 *    stride doubles until at most (maxRecords + recentRecords) / 2 records remain, so the
 *    next thinning is at least (maxRecords − recentRecords) / 2 appends away (amortized
 *    O(1) per record). Strides of powers of two nest: thinning again never brings back a
 *    dropped record, and the far past stays evenly spread.
 * Mandatory records are never dropped, so the result may exceed the target when they alone do.
 *
 * @returns true when records were dropped.
 */
export function boundTrajectory(records: StepRecord[], bound: TrajectoryBound, keep: ReadonlySet<number>): boolean {
  const n = records.length;
  if (n <= bound.maxRecords) return false;
  const recentFrom = n - bound.recentRecords;
  const kept = strideSelection(records, Math.floor((bound.maxRecords + bound.recentRecords) / 2), (i) => i === 0 || i >= recentFrom || keep.has(records[i].step));
  let w = 0;
  for (let i = 0; i < n; i++) if (kept(i)) records[w++] = records[i];
  records.length = w;
  return w < n;
}

/**
 * The power-of-two stride rule shared by every trajectory thinning (the grove's memory
 * bound, the ledger's record cap, the page's displayed trace): keep every index `must`
 * names, plus the records whose step is a multiple of the smallest power-of-two stride that
 * brings the count to at most `target` (or the stride past the last step, when the mandatory
 * records alone exceed it). Strides nest, so thinning a thinned list again keeps a subset
 * and never brings back a dropped record.
 * @param records step-ascending records
 * @returns a predicate over indices of `records`: kept or not
 */
export function strideSelection(records: readonly StepRecord[], target: number, must: (i: number) => boolean): (i: number) => boolean {
  const n = records.length;
  const lastStep = n > 0 ? records[n - 1].step : 0;
  let stride = 1;
  const kept = (i: number): boolean => must(i) || records[i].step % stride === 0;
  for (;;) {
    let count = 0;
    for (let i = 0; i < n; i++) if (kept(i)) count++;
    if (count <= target || stride > lastStep) return kept;
    stride *= 2;
  }
}

/** Index of the record at `step` in a step-ascending trajectory, or −1 (binary search). */
export function indexOfStep(records: readonly StepRecord[], step: number): number {
  let lo = 0;
  let hi = records.length - 1;
  while (lo <= hi) {
    const mid = (lo + hi) >> 1;
    const s = records[mid].step;
    if (s === step) return mid;
    if (s < step) lo = mid + 1;
    else hi = mid - 1;
  }
  return -1;
}

/** The records with step ≤ `step` (a new array; the records themselves are shared). */
export function recordsUpTo(records: readonly StepRecord[], step: number): StepRecord[] {
  let lo = 0;
  let hi = records.length;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    if (records[mid].step <= step) lo = mid + 1;
    else hi = mid;
  }
  return records.slice(0, lo);
}
