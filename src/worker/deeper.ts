/**
 * The deeper readouts between the page, the worker and the ledger: what a branch keeps (the
 * latest result of each kind, taken at a step of that branch), the check of a `deeper` request's
 * options at the worker's boundary, the trajectory path the plane projects, and the read-back
 * of stored results with the fields the panel relies on checked (a result of another shape is
 * left out, not drawn broken).
 *
 * A stopped readout is discarded: the branch keeps its previous result of that kind (if any),
 * never a partial one, so a kept result is always complete.
 */
import type { DeeperRequest, DeeperResult } from '../core/probe/readouts-at';
import type { CheckpointData } from './protocol';
import { DEEPER_KINDS, type DeeperKept } from '../core/probe/deeper-kept';

export type { DeeperRequest, DeeperResult };
export { DEEPER_KINDS, deeperFromLedger, type DeeperKept, type DeeperKind } from '../core/probe/deeper-kept';

/** Most grid points per side of a plane and most rates of a range test a request may ask for (limits enforced before any work). */
export const DEEPER_LIMITS = { planePoints: 61, linePoints: 401, rangeSteps: 400, batchSizes: 6, batchExamples: 100_000 } as const;

type Obj = Record<string, unknown>;
const isObj = (v: unknown): v is Obj => typeof v === 'object' && v !== null && !Array.isArray(v);
const posInt = (v: unknown): boolean => typeof v === 'number' && Number.isInteger(v) && v > 0;
const posNum = (v: unknown): boolean => typeof v === 'number' && Number.isFinite(v) && v > 0;

/** Why `v` is not an optional whole number in [lo, hi] (null when it is). */
function optionalCount(v: unknown, field: string, lo: number, hi: number): string | null {
  if (v === undefined) return null;
  return typeof v === 'number' && Number.isInteger(v) && v >= lo && v <= hi ? null : `request.request.${field} must be a whole number from ${lo} to ${hi}, got ${String(v)}`;
}

/**
 * Checks the options of a deeper readout request (the worker's boundary).
 *
 * @returns null when well-formed, else a message naming the bad field.
 */
export function deeperRequestProblem(value: unknown): string | null {
  if (!isObj(value)) return 'request.request must be a mapping with a `what` field';
  const r = value;
  switch (r.what) {
    case 'line':
      return optionalCount(r.points, 'points', 5, DEEPER_LIMITS.linePoints);
    case 'plane':
      if (r.directions !== 'random' && r.directions !== 'eigenvectors') return `request.request.directions must be random or eigenvectors, got ${String(r.directions)}`;
      return optionalCount(r.points, 'points', 3, DEEPER_LIMITS.planePoints);
    case 'range':
      if (r.from !== undefined && !posNum(r.from)) return `request.request.from must be a positive learning rate, got ${String(r.from)}`;
      if (r.to !== undefined && !posNum(r.to)) return `request.request.to must be a positive learning rate, got ${String(r.to)}`;
      if (posNum(r.from) && posNum(r.to) && (r.from as number) >= (r.to as number)) return `request.request.from (${String(r.from)}) must be below request.request.to (${String(r.to)})`;
      return optionalCount(r.steps, 'steps', 3, DEEPER_LIMITS.rangeSteps);
    case 'precision':
      if (r.bits === undefined) return null;
      return Array.isArray(r.bits) && r.bits.length > 0 && r.bits.every((b) => typeof b === 'number' && Number.isInteger(b) && b >= 1 && b <= 52)
        ? null
        : 'request.request.bits must be a non-empty list of whole numbers from 1 to 52 (significant bits)';
    case 'batch':
      if (!Array.isArray(r.sizes) || r.sizes.length < 2 || r.sizes.length > DEEPER_LIMITS.batchSizes || !r.sizes.every(posInt))
        return `request.request.sizes must list 2 to ${DEEPER_LIMITS.batchSizes} positive whole batch sizes`;
      return posInt(r.examples) && (r.examples as number) <= DEEPER_LIMITS.batchExamples ? null : `request.request.examples must be a whole number from 1 to ${DEEPER_LIMITS.batchExamples}, got ${String(r.examples)}`;
    default:
      return `request.request.what must be one of ${DEEPER_KINDS.join(', ')}, got ${String(r.what)}`;
  }
}

/**
 * The weights the plane projects as the branch's path: its checkpoints up to `step` (ascending),
 * then `current` at `step`.
 */
export function planePath(checkpoints: readonly CheckpointData[], step: number, current: Float64Array): { steps: number[]; weights: Float64Array[] } {
  const before = checkpoints.filter((c) => c.step < step).sort((a, b) => a.step - b.step);
  return { steps: [...before.map((c) => c.step), step], weights: [...before.map((c) => Float64Array.from(c.state.params)), Float64Array.from(current)] };
}

/** `kept` with `result` as its kind's latest. */
export function keepDeeper(kept: DeeperKept, result: DeeperResult): DeeperKept {
  return { ...kept, [result.what]: result } as DeeperKept;
}

/** `kept` without the results taken after `step` (those steps were discarded). */
export function deeperUpTo(kept: DeeperKept, step: number): DeeperKept {
  const out: DeeperKept = {};
  for (const k of DEEPER_KINDS) {
    const r = kept[k];
    if (r !== undefined && r.step <= step) (out as Record<string, DeeperResult>)[k] = r;
  }
  return out;
}

/** Most points per batch-size run a kept (and replied) comparison carries: an even sample, first and last included. */
export const BATCH_RUN_POINTS = 400;

/** Even sample of indices 0…n−1 (≤ `max`, first and last included). */
function sampleIndices(n: number, max: number): number[] {
  if (n <= max) return Array.from({ length: n }, (_, i) => i);
  const out = new Set<number>();
  for (let k = 0; k < max; k++) out.add(Math.round((k * (n - 1)) / (max - 1)));
  return [...out];
}

/**
 * The result as kept and sent: a batch comparison's runs sampled to {@link BATCH_RUN_POINTS}
 * points each (their final losses and verdicts are core's, untouched); other kinds as they are.
 */
export function thinDeeper(result: DeeperResult): DeeperResult {
  if (result.what !== 'batch') return result;
  const runs = result.result.runs.map((run) => {
    const idx = sampleIndices(run.examples.length, BATCH_RUN_POINTS);
    return { ...run, examples: idx.map((i) => run.examples[i]), loss: idx.map((i) => run.loss[i]) };
  });
  return { ...result, result: { ...result.result, runs } };
}
