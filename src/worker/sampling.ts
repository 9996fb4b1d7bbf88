/**
 * Memory and message-size policy of the engine and the page: the bounds the host hands to
 * its grove (the thinning rule itself is core's `boundTrajectory`), the samples replies
 * carry, and {@link thinInPlace}, which keeps the page's displayed trace bounded by the same
 * rule.
 */
import type { StepRecord } from '../core/state';
import { boundTrajectory } from '../core/session';

/** Most step records held in memory per session (host and page). */
export const MEMORY_RECORD_CAP = 20000;

/** Most automatic checkpoints the host's grove holds per branch (spacing doubles past it). */
export const MEMORY_CHECKPOINT_CAP = 200;

/** Newest records always kept at full density. */
export const RECENT_RECORDS = 2000;

const NO_PINS: ReadonlySet<number> = new Set();

/**
 * Thins `records` in place when longer than `cap` (core's `boundTrajectory`: the first and
 * the newest `keepRecent` records stay, the older part keeps a power-of-two stride of steps).
 *
 * @returns the same array (for chaining).
 */
export function thinInPlace(records: StepRecord[], cap = MEMORY_RECORD_CAP, keepRecent = RECENT_RECORDS): StepRecord[] {
  boundTrajectory(records, { maxRecords: cap, recentRecords: keepRecent }, NO_PINS);
  return records;
}

/** Most records a progress or final reply carries (an even sample of what was produced). */
export const REPLY_SAMPLE = 100;

/** Most records of a full trajectory sent to the page for display. */
export const DISPLAY_RECORDS = 5000;

/**
 * An even sample of at most `max` records that always includes the first and the last.
 * The page only draws and summarizes; the full trajectory stays in the worker.
 */
export function sampleRecords(records: readonly StepRecord[], max: number): StepRecord[] {
  const n = records.length;
  if (n <= max) return records.slice();
  const out: StepRecord[] = [];
  let last = -1;
  for (let k = 0; k < max; k++) {
    const i = Math.round((k * (n - 1)) / (max - 1));
    if (i !== last) out.push(records[i]);
    last = i;
  }
  return out;
}
