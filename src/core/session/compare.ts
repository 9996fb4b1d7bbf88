/**
 * Comparing branches at matched steps: which steps are compared, the key numbers of every
 * branch there, and the verdicts (better, worse, same, diverged; stable or not) that the
 * comparison view and the decision record show. Decided here, once, so no view judges.
 *
 * Matched steps (algorithm):
 * 1. A step is *common* when every compared branch has a record of exactly that step (records
 *    may be thinned on long runs, so not every step qualifies).
 * 2. The span runs from the latest fork step among the compared branches (where they part; 0
 *    when none was forked) to the last step all of them reached (the smallest tip).
 * 3. Chosen: the span's start, its end, `between` evenly spaced points inside it (each moved to
 *    the nearest common step), and the latest common step at which every branch has a sharpness
 *    measurement — each only when common, without duplicates, ascending.
 */
import type { StepRecord } from '../state';

/** One sharpness measurement of a branch (the worker's `SharpnessPoint` satisfies it). */
export interface SharpnessSample {
  step: number;
  lambdaMax: number;
  /** The sharpness the stability rule uses (λmax, or of the preconditioned matrix). */
  sharpness: number;
  /** Largest sharpness the learning rate in effect tolerates, or null when no rule applies. */
  limit: number | null;
}

/** Rows each update uses: updates after step `from` use `rows` rows (segments in step order). */
export interface BatchSegment {
  from: number;
  rows: number;
}

/** A branch as the comparison reads it. */
export interface CompareInput {
  name: string;
  /** Step records, steps ascending (possibly thinned), ending at the branch's tip. */
  trajectory: readonly StepRecord[];
  /** Step the branch was forked at, or null for the root. */
  forkStep: number | null;
  /** Rows per update along the branch's ancestry (see {@link examplesAt}); null when the objective has no data rows. */
  batches: readonly BatchSegment[] | null;
  sharpness: readonly SharpnessSample[];
}

/** How a branch's training (or held-out) loss compares with the reference branch's at one step. */
export type LossVerdict = 'reference' | 'better' | 'worse' | 'same' | 'diverged';

/** One branch at one matched step. */
export interface MatchedCell {
  branch: string;
  loss: number;
  heldOutLoss: number | null;
  gradNorm: number;
  /** ‖ΔW‖/‖W‖ per layer of the update that led to this step (empty at step 0 or without layers). */
  updateRatios: number[];
  /** Examples the optimizer has drawn up to this step, or null without data rows. */
  examples: number | null;
  /** Sharpness measured at exactly this step, with its limit and whether it stays within it. */
  lambdaMax: number | null;
  sharpness: number | null;
  limit: number | null;
  stable: boolean | null;
  verdict: LossVerdict;
  heldOutVerdict: LossVerdict | null;
}

/** Why a step was chosen. */
export type MatchReason = 'fork' | 'between' | 'end' | 'sharpness';

/** All compared branches at one step. */
export interface MatchedStep {
  step: number;
  reasons: MatchReason[];
  cells: MatchedCell[];
}

/** The first measurement of a branch above its stability limit. */
export interface Crossing {
  branch: string;
  /** Step of the first sharpness above the limit, or null when none of `measured` points crossed. */
  step: number | null;
  sharpness: number | null;
  limit: number | null;
  /** Sharpness points with a limit that were looked at. */
  measured: number;
}

/** Result of {@link compareBranches}. */
export interface BranchComparison {
  /** The branch the others are judged against. */
  reference: string;
  branches: string[];
  steps: MatchedStep[];
  crossings: Crossing[];
  /** The branch with the lowest finite training loss at the last matched step (null when none is finite). */
  best: { step: number; branch: string } | null;
}

/** Relative loss difference below which two branches count as the same (the 6 significant digits the cell shows). */
export const SAME_LOSS = 1e-6;

/** Options of {@link compareBranches}. */
export interface CompareOptions {
  /** Name of the reference branch (default: the first input). */
  reference?: string;
  /** Evenly spaced points inside the span (default 2). */
  between?: number;
}

/**
 * Examples drawn up to `step`: Σ over segments of rows × updates in the segment.
 *
 * @param segments - ascending `from`; the first usually `from: 0`.
 */
export function examplesAt(step: number, segments: readonly BatchSegment[]): number {
  let total = 0;
  for (let i = 0; i < segments.length; i++) {
    const end = i + 1 < segments.length ? Math.min(step, segments[i + 1].from) : step;
    if (end > segments[i].from) total += segments[i].rows * (end - segments[i].from);
  }
  return total;
}

/**
 * Verdict of `value` against `reference` (lower loss is better): non-finite is `diverged`; a
 * relative difference |a − b| / max(|a|, |b|) up to {@link SAME_LOSS} is `same`.
 */
export function lossVerdict(value: number, reference: number): Exclude<LossVerdict, 'reference'> {
  if (!Number.isFinite(value)) return 'diverged';
  if (!Number.isFinite(reference)) return 'better';
  const scale = Math.max(Math.abs(value), Math.abs(reference));
  if (scale === 0 || Math.abs(value - reference) <= SAME_LOSS * scale) return 'same';
  return value < reference ? 'better' : 'worse';
}

/** The first sharpness above its limit (points in step order). */
export function firstCrossing(branch: string, points: readonly SharpnessSample[]): Crossing {
  const limited = points.filter((p) => p.limit !== null);
  const over = limited.find((p) => p.sharpness > (p.limit as number));
  return { branch, step: over?.step ?? null, sharpness: over?.sharpness ?? null, limit: over?.limit ?? null, measured: limited.length };
}

/** Index of `step` in step-ascending records, or −1. */
function find(records: readonly { step: number }[], step: number): number {
  let lo = 0;
  let hi = records.length - 1;
  while (lo <= hi) {
    const mid = (lo + hi) >> 1;
    if (records[mid].step === step) return mid;
    if (records[mid].step < step) lo = mid + 1;
    else hi = mid - 1;
  }
  return -1;
}

/** The matched steps and why each was chosen (see the module comment). */
export function matchedSteps(inputs: readonly CompareInput[], between = 2): { step: number; reasons: MatchReason[] }[] {
  if (inputs.length === 0 || inputs.some((b) => b.trajectory.length === 0)) return [];
  const common = inputs[0].trajectory.map((r) => r.step).filter((s) => inputs.every((b) => find(b.trajectory, s) >= 0));
  if (common.length === 0) return [];
  const start = Math.max(0, ...inputs.map((b) => b.forkStep ?? 0));
  const end = Math.min(...inputs.map((b) => b.trajectory[b.trajectory.length - 1].step));
  const chosen = new Map<number, MatchReason[]>();
  const add = (s: number, why: MatchReason): void => {
    chosen.set(s, [...(chosen.get(s) ?? []), why]);
  };
  const inSpan = common.filter((s) => s >= Math.min(start, end) && s <= end);
  if (inSpan.length === 0) return [];
  const nearest = (target: number): number => inSpan.reduce((a, s) => (Math.abs(s - target) < Math.abs(a - target) ? s : a), inSpan[0]);
  if (find(inSpan.map((step) => ({ step })), start) >= 0) add(start, 'fork');
  for (let i = 1; i <= between; i++) {
    const s = nearest(start + ((end - start) * i) / (between + 1));
    if (s > start && s < inSpan[inSpan.length - 1]) add(s, 'between');
  }
  add(inSpan[inSpan.length - 1], 'end');
  const measured = inSpan.filter((s) => inputs.every((b) => find(b.sharpness, s) >= 0));
  if (measured.length > 0) add(measured[measured.length - 1], 'sharpness');
  return [...chosen.entries()].sort((a, b) => a[0] - b[0]).map(([step, reasons]) => ({ step, reasons }));
}

/**
 * Compares branches at matched steps (see the module comment) against a reference branch.
 *
 * @throws when `reference` is not among the inputs.
 */
export function compareBranches(inputs: readonly CompareInput[], options: CompareOptions = {}): BranchComparison {
  const reference = options.reference ?? inputs[0]?.name ?? '';
  const ref = inputs.find((b) => b.name === reference);
  if (inputs.length > 0 && ref === undefined) throw new Error(`the reference branch '${reference}' is not among the compared branches (${inputs.map((b) => b.name).join(', ')})`);
  const steps: MatchedStep[] = matchedSteps(inputs, options.between).map(({ step, reasons }) => {
    const refRecord = ref ? ref.trajectory[find(ref.trajectory, step)] : undefined;
    const cells = inputs.map((b): MatchedCell => {
      const r = b.trajectory[find(b.trajectory, step)];
      const p = b.sharpness[find(b.sharpness, step)];
      const isRef = b === ref;
      const held = r.heldOutLoss ?? null;
      const refHeld = refRecord?.heldOutLoss ?? null;
      return {
        branch: b.name,
        loss: r.loss,
        heldOutLoss: held,
        gradNorm: r.gradNorm,
        updateRatios: r.step === 0 ? [] : r.layers.map((l) => l.updateRatio),
        examples: b.batches === null ? null : examplesAt(step, b.batches),
        lambdaMax: p?.lambdaMax ?? null,
        sharpness: p?.sharpness ?? null,
        limit: p?.limit ?? null,
        stable: p === undefined || p.limit === null ? null : p.sharpness <= p.limit,
        verdict: isRef ? 'reference' : lossVerdict(r.loss, (refRecord as StepRecord).loss),
        heldOutVerdict: held === null || refHeld === null ? null : isRef ? 'reference' : lossVerdict(held, refHeld)
      };
    });
    return { step, reasons, cells };
  });
  const last = steps[steps.length - 1];
  let best: BranchComparison['best'] = null;
  if (last !== undefined) {
    for (const c of last.cells) {
      if (!Number.isFinite(c.loss)) continue;
      const current = best === null ? undefined : last.cells.find((x) => x.branch === (best as { branch: string }).branch);
      if (current === undefined || c.loss < current.loss) best = { step: last.step, branch: c.branch };
    }
  }
  return { reference, branches: inputs.map((b) => b.name), steps, crossings: inputs.map((b) => firstCrossing(b.name, b.sharpness)), best };
}
