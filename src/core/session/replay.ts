/** Comparison of a recorded branch with its replay (see `Grove.replay`). */
import type { StepRecord } from '../state';
import type { Session } from './live';

/** The fields of a step record a replay compares, in the order they are reported. */
export const COMPARED_FIELDS = ['step', 'loss', 'gradNorm', 'updateNorm', 'lr'] as const;

/** The first difference a replay found: what differed, where, and both values. */
export interface ReplayDifference {
  step: number;
  /**
   * A compared field of a step record, the state's fingerprint, or the weights (a stored state
   * whose weights differ from the replay's while its stored fingerprint matches: the state was
   * edited after it was fingerprinted).
   */
  quantity: (typeof COMPARED_FIELDS)[number] | 'fingerprint' | 'weights';
  /** A stored step record, a checkpoint's state, or the state the replay ends at. */
  where: 'record' | 'checkpoint' | 'final';
  recorded: number | string;
  replayed: number | string;
  /** |recorded − replayed| / max(|recorded|, |replayed|) for numbers (absent for fingerprints). */
  relative?: number;
}

/** Verdict of a replay. */
export interface ReplayReport {
  match: 'bit-identical' | 'within-tolerance' | 'differs';
  /** First step whose loss, fingerprint or parameters differ in any bit (absent when none). */
  firstDifferingStep?: number;
  /** What differed first (at {@link ReplayReport.firstDifferingStep}; a record's field before the state's fingerprint). */
  firstDifference?: ReplayDifference;
  /** Largest ‖Δw‖∞ / ‖w‖∞ over the compared parameter vectors. */
  maxRelDiff: number;
  tolerance: number;
  /** Steps whose fingerprints were compared (checkpoints and the final step). */
  comparedSteps: number[];
  /** Fingerprint of the recorded state at the replay's last step. */
  recordedFingerprint: string;
  /** Fingerprint the replay reached. */
  replayedFingerprint: string;
}

/** One replayed step: its record when recomputed, and fingerprint/parameters when a checkpoint is there. */
export interface ReplayedStep {
  step: number;
  record: StepRecord | null;
  fingerprint: string | null;
  params: Float64Array | null;
}

/**
 * Bitwise equality of the deterministic fields of two step records: step, full-batch loss,
 * ‖g‖, ‖Δw‖ and learning rate (wall time, and fields a ledger may not hold, excluded).
 */
export function sameRecord(a: StepRecord, b: StepRecord): boolean {
  return a.step === b.step && Object.is(a.loss, b.loss) && Object.is(a.gradNorm, b.gradNorm) && Object.is(a.updateNorm, b.updateNorm) && Object.is(a.lr, b.lr);
}

/** The first field in which two step records differ in any bit, or null (see {@link sameRecord}). */
export function recordDifference(recorded: StepRecord, replayed: StepRecord): ReplayDifference | null {
  for (const q of COMPARED_FIELDS) {
    const a = recorded[q];
    const b = replayed[q];
    if (Object.is(a, b)) continue;
    const scale = Math.max(Math.abs(a), Math.abs(b));
    const relative = Number.isFinite(a) && Number.isFinite(b) ? (scale === 0 ? 0 : Math.abs(a - b) / scale) : Infinity;
    return { step: recorded.step, quantity: q, where: 'record', recorded: a, replayed: b, relative };
  }
  return null;
}

/** Inputs of {@link compareReplay}. */
export interface ReplayInputs {
  trajectory: readonly StepRecord[];
  checkpoints: readonly { step: number; fingerprint: string; state: { params: Float64Array } }[];
  replayed: readonly ReplayedStep[];
  finalRecorded: Session;
  finalReplayed: Session;
  tolerance: number;
}

/** ‖a − b‖∞ / ‖b‖∞ (0 when both are zero; Infinity when b = 0 ≠ a or a value is not finite). */
export function relativeDifference(a: Float64Array, b: Float64Array): number {
  let num = 0;
  let den = 0;
  for (let i = 0; i < a.length; i++) {
    const d = Math.abs(a[i] - b[i]);
    if (Number.isNaN(d)) return Object.is(a[i], b[i]) ? 0 : Infinity;
    num = Math.max(num, d);
    den = Math.max(den, Math.abs(b[i]));
  }
  if (num === 0) return 0;
  return den === 0 ? Infinity : num / den;
}

/** True when two vectors hold the same bits (NaN payloads aside), element by element. */
function sameBits(a: Float64Array, b: Float64Array): boolean {
  if (a.length !== b.length) return false;
  for (let i = 0; i < a.length; i++) if (!Object.is(a[i], b[i])) return false;
  return true;
}

/**
 * Compares recorded and replayed data step by step (see `Grove.replay`): every recorded step
 * record the replay recomputed ({@link sameRecord}), the fingerprint and parameters at every
 * checkpoint, and the final state.
 */
export function compareReplay(x: ReplayInputs): ReplayReport {
  let first = Infinity;
  let difference: ReplayDifference | undefined;
  // The earliest step wins; at one step a record's field is named before the state's fingerprint.
  const note = (d: ReplayDifference): void => {
    if (d.step < first) {
      first = d.step;
      difference = d;
    }
  };
  let maxRel = 0;
  const compared: number[] = [];
  const byStep = new Map(x.replayed.map((s) => [s.step, s]));
  for (const rec of x.trajectory) {
    const r = byStep.get(rec.step);
    if (r === undefined || r.record === null) continue;
    const d = recordDifference(rec, r.record);
    if (d !== null) note(d);
  }
  for (const c of x.checkpoints) {
    const r = byStep.get(c.step);
    if (r === undefined || r.fingerprint === null || r.params === null) continue;
    compared.push(c.step);
    const rel = relativeDifference(r.params, c.state.params);
    if (r.fingerprint !== c.fingerprint) note({ step: c.step, quantity: 'fingerprint', where: 'checkpoint', recorded: c.fingerprint, replayed: r.fingerprint });
    else if (!sameBits(r.params, c.state.params)) note({ step: c.step, quantity: 'weights', where: 'checkpoint', recorded: 'stored weights', replayed: 'replayed weights', relative: rel });
    maxRel = Math.max(maxRel, rel);
  }
  const finalStep = x.finalRecorded.stepCount;
  if (!compared.includes(finalStep)) compared.push(finalStep);
  const recordedFingerprint = x.finalRecorded.fingerprint();
  const replayedFingerprint = x.finalReplayed.fingerprint();
  if (recordedFingerprint !== replayedFingerprint) note({ step: finalStep, quantity: 'fingerprint', where: 'final', recorded: recordedFingerprint, replayed: replayedFingerprint });
  maxRel = Math.max(maxRel, relativeDifference(x.finalReplayed.parameters, x.finalRecorded.parameters));
  const report: ReplayReport = {
    match: first === Infinity ? 'bit-identical' : maxRel <= x.tolerance ? 'within-tolerance' : 'differs',
    maxRelDiff: maxRel,
    tolerance: x.tolerance,
    comparedSteps: compared,
    recordedFingerprint,
    replayedFingerprint
  };
  if (first !== Infinity) report.firstDifferingStep = first;
  if (difference !== undefined) report.firstDifference = difference;
  return report;
}
