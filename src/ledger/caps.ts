/**
 * Pure policies that keep a long trajectory's ledger small: which checkpoints to keep,
 * and which step records.
 */
import type { StepRecord } from '../core/state';
import { pow } from '../core/elementary';
import { strideSelection } from '../core/session/trajectory';

/**
 * Chooses which checkpoint steps to keep.
 *
 * 1. Always keep the first step (step 0 on a main branch), the head (the largest step)
 *    and every step in `keep` that is present (user pins, fork points of other branches).
 * 2. Fill the remaining budget `maxCount − |kept|` with steps whose distance from the head
 *    is closest to a geometric ladder d_i = D^(i/(budget+1)), i = 1…budget, D the distance from the head to
 *    the first step: recent history stays dense (cheap to branch from), the far past sparse.
 * 3. Return the kept steps sorted ascending, without duplicates.
 *
 * Mandatory steps are never dropped, so the result exceeds `maxCount` when they alone do.
 * @param steps - available checkpoint steps (any order; duplicates ignored).
 * @param maxCount - the budget, at least 2 to hold first and head.
 * @param keep - steps that must survive.
 */
export function thinCheckpoints(steps: readonly number[], maxCount: number, keep: readonly number[] = []): number[] {
  const all = Array.from(new Set(steps)).sort((a, b) => a - b);
  if (all.length === 0) return [];
  const first = all[0];
  const head = all[all.length - 1];
  const kept = new Set<number>([first, head]);
  const present = new Set(all);
  for (const k of keep) if (present.has(k)) kept.add(k);
  const budget = Math.floor(maxCount) - kept.size;
  const free = all.filter((s) => !kept.has(s));
  if (budget >= free.length) return all;
  const span = head - first;
  for (let i = budget; i >= 1; i--) {
    // Rungs from the farthest back to the nearest; each takes the closest step still free.
    const target = head - pow(span, i / (budget + 1)); // core's pow: the same checkpoints kept in every engine
    let best = -1;
    let bestD = Infinity;
    for (let j = 0; j < free.length; j++) {
      const d = Math.abs(free[j] - target);
      if (!kept.has(free[j]) && d < bestD) {
        best = j;
        bestD = d;
      }
    }
    if (best < 0) break;
    kept.add(free[best]);
  }
  return Array.from(kept).sort((a, b) => a - b);
}

/**
 * Caps a trajectory at about `cap` records.
 *
 * Up to `cap` records everything is kept. Beyond it the first and last records, every
 * record whose step is in `keep` (steps that findings refer to) and the records whose step
 * is a multiple of the smallest power-of-two stride that fits the cap are kept. Strides of
 * powers of two nest, so capping an already capped trajectory again keeps the same
 * records: saving a long run repeatedly does not erode its early part.
 * @returns a new array of the kept records, in their original order.
 */
export function capTrajectory(records: readonly StepRecord[], cap: number, keep: readonly number[] = []): StepRecord[] {
  if (records.length <= cap) return records.slice();
  const must = new Set<number>(keep);
  const kept = strideSelection(records, cap, (i) => i === 0 || i === records.length - 1 || must.has(records[i].step));
  return records.filter((_, i) => kept(i));
}
