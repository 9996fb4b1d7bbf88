/**
 * Bookkeeping of one grove branch: its checkpoints (kept in step order, thinned by doubling
 * the spacing), its trajectory records, and the *kept future* — the steps after the cursor
 * that a rewind keeps until they are discarded explicitly.
 *
 * A branch has a cursor (its live session's step) and a tip (the furthest step it reached; the
 * trajectory always ends there). After a rewind the cursor lies before the tip: stepping on with
 * the same recipe re-steps through the kept steps (each re-stepped record is compared with the
 * kept one bit for bit) until the cursor reaches the tip again; nothing is recorded twice.
 */
import type { StepRecord } from '../state';
import type { Branch, Checkpoint } from './grove-data';
import { copyRecord } from './grove-data';
import { sameRecord } from './replay';
import { boundTrajectory, indexOfStep, recordsUpTo, type TrajectoryBound } from './trajectory';

/** Step of the branch's tip: the last trajectory record (the cursor when nothing is kept ahead). */
export function tipStep(b: Branch): number {
  return b.trajectory[b.trajectory.length - 1].step;
}

/** Inserts a checkpoint in step order (replacing an automatic one at the same step) and thins. */
export function insertCheckpoint(b: Branch, c: Checkpoint, maxAutomatic: number): Checkpoint {
  const i = b.checkpoints.findIndex((x) => x.step >= c.step);
  if (i < 0) b.checkpoints.push(c);
  else if (b.checkpoints[i].step === c.step) {
    b.checkpoints[i].manual = b.checkpoints[i].manual || c.manual;
    return b.checkpoints[i];
  } else b.checkpoints.splice(i, 0, c);
  thinCheckpoints(b, maxAutomatic);
  return c;
}

/**
 * Thinning rule of automatic checkpoints: past `maxAutomatic`, the spacing k doubles and
 * automatic checkpoints whose step is not a multiple of the new k are dropped (the first one
 * and manual ones always stay). A branch without a spacing (k = 0, e.g. resumed from saved
 * checkpoints at irregular steps) keeps the newest `maxAutomatic`.
 */
export function thinCheckpoints(b: Branch, maxAutomatic: number): void {
  const first = b.checkpoints[0];
  const automatic = (c: Checkpoint): boolean => !c.manual && c !== first;
  if (b.every === 0) {
    const auto = b.checkpoints.filter(automatic);
    const drop = new Set(auto.slice(0, Math.max(0, auto.length - maxAutomatic)));
    if (drop.size > 0) b.checkpoints = b.checkpoints.filter((c) => !drop.has(c));
    return;
  }
  while (b.checkpoints.filter(automatic).length > maxAutomatic) {
    b.every *= 2;
    b.checkpoints = b.checkpoints.filter((c) => !automatic(c) || c.step % b.every === 0);
  }
}

/** Puts `r` into the trajectory at its step's place unless a record of that step is there. */
export function insertRecord(b: Branch, r: StepRecord): void {
  if (indexOfStep(b.trajectory, r.step) >= 0) return;
  const at = recordsUpTo(b.trajectory, r.step).length;
  b.trajectory.splice(at, 0, copyRecord(r));
}

/**
 * What one update of branch b means for its books.
 *
 * - With steps kept ahead (cursor before the tip): the record re-steps a kept step. It must
 *   equal the kept record bit for bit (a kept record thinned away cannot be compared); when
 *   the cursor reaches the tip the branch is whole again. A record that differs means the kept
 *   steps no longer belong to this trajectory: they are dropped from this step on and the new
 *   record is kept instead (it cannot happen with a deterministic objective; it is handled
 *   rather than trusted).
 * - Otherwise the record extends the trajectory, an automatic checkpoint is taken every
 *   `b.every` steps, and the trajectory is thinned past its bound.
 *
 * @param checkpoint - takes an automatic checkpoint of the branch's current state.
 */
export function afterUpdate(b: Branch, r: StepRecord, bound: TrajectoryBound, checkpoint: () => void): void {
  if (b.tip !== null) {
    const i = indexOfStep(b.trajectory, r.step);
    if (i < 0 || sameRecord(b.trajectory[i], r)) {
      if (r.step >= b.tip.step) b.tip = null;
      return;
    }
    dropAfter(b, r.step - 1);
  }
  b.trajectory.push(copyRecord(r));
  if (b.every > 0 && r.step % b.every === 0) checkpoint();
  if (b.trajectory.length > bound.maxRecords) boundTrajectory(b.trajectory, bound, new Set(b.checkpoints.map((c) => c.step)));
}

/** Drops every record and checkpoint after `step` and forgets the tip state. */
export function dropAfter(b: Branch, step: number): void {
  b.trajectory = recordsUpTo(b.trajectory, step);
  b.checkpoints = b.checkpoints.filter((c) => c.step <= step);
  b.tip = null;
}
