/** Comparison of a recorded branch with its replay (see `Grove.replay`). */
import type { StepRecord } from '../state';
import type { Session } from './live';

/** Verdict of a replay. */
export interface ReplayReport {
  match: 'bit-identical' | 'within-tolerance' | 'differs';
  /** First step whose loss, fingerprint or parameters differ in any bit (absent when none). */
  firstDifferingStep?: number;
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

/**
 * Compares recorded and replayed data step by step (see `Grove.replay`): every recorded step
 * record the replay recomputed ({@link sameRecord}), the fingerprint and parameters at every
 * checkpoint, and the final state.
 */
export function compareReplay(x: ReplayInputs): ReplayReport {
  let first = Infinity;
  let maxRel = 0;
  const compared: number[] = [];
  const byStep = new Map(x.replayed.map((s) => [s.step, s]));
  for (const rec of x.trajectory) {
    const r = byStep.get(rec.step);
    if (r === undefined || r.record === null) continue;
    if (!sameRecord(r.record, rec)) first = Math.min(first, rec.step);
  }
  for (const c of x.checkpoints) {
    const r = byStep.get(c.step);
    if (r === undefined || r.fingerprint === null || r.params === null) continue;
    compared.push(c.step);
    if (r.fingerprint !== c.fingerprint) first = Math.min(first, c.step);
    maxRel = Math.max(maxRel, relativeDifference(r.params, c.state.params));
  }
  const finalStep = x.finalRecorded.stepCount;
  if (!compared.includes(finalStep)) compared.push(finalStep);
  const recordedFingerprint = x.finalRecorded.fingerprint();
  const replayedFingerprint = x.finalReplayed.fingerprint();
  if (recordedFingerprint !== replayedFingerprint) first = Math.min(first, finalStep);
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
  return report;
}
