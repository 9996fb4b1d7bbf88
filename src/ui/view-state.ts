/**
 * The plain state a stepwell cell's widget renders. The controller owns and replaces it;
 * views only read it, so any number of views (or none) can show one cell.
 */
import type { StepRecord } from '../core/state';
import type { AuditResult } from '../core/probe/gradcheck';
import type { LedgerRead, SpecChecker } from './ports';
import type { BranchComparison, BranchReadouts, BranchTrace, CurvatureResult, SessionSummary, SharpnessPoint, SpecProblem, StopCondition, VerifyResult } from '../worker/protocol';
import type { CompareAxis } from '../figures/compare';
import type { DeeperKept } from '../worker/deeper';
import type { BatchOfBranch } from '../worker/batch-branches';
import { DEFAULT_DEEPER_CHOICE, type DeeperChoice } from './deeper-form';

/** Readout tabs of the cell widget. */
export type ReadoutTab = 'trace' | 'curvature' | 'layers' | 'data' | 'audit' | 'deeper' | 'compare';

/** The cell widget's tabs in order, with their labels. */
export const READOUT_TABS: readonly (readonly [ReadoutTab, string])[] = [
  ['trace', 'Trace'],
  ['curvature', 'Curvature'],
  ['layers', 'Layers'],
  ['data', 'Data'],
  ['audit', 'Audit'],
  ['deeper', 'Deeper'],
  ['compare', 'Compare']
];

/** The active branch's diagnosis as the worker sent it: its findings and the readouts they stand on. */
export type DiagnosisView = Pick<BranchReadouts, 'findings' | 'noise' | 'activations' | 'init' | 'data' | 'derived'>;

/** The diagnosis before any is known. */
export function emptyDiagnosis(): DiagnosisView {
  return {
    findings: [],
    noise: null,
    activations: { start: null, now: null },
    init: null,
    data: null,
    derived: { balance: null, generalization: null, sharpness: { verdict: { kind: 'no-limit', measured: 0 }, sentence: '' }, standardization: null, tried: [] }
  };
}

/** The diagnosis part of a branch's readouts. */
export function diagnosisOf(r: BranchReadouts): DiagnosisView {
  return { findings: r.findings, noise: r.noise, activations: r.activations, init: r.init, data: r.data, derived: r.derived };
}

/** Inline forms of the cell widget. */
export type FormKind = 'run-until' | 'rewind' | 'branch' | 'rename' | 'record';

/** An action that would lose work, waiting for the user's yes. */
export type Confirmation =
  | { kind: 'reset'; text: string }
  | { kind: 'delete'; branch: string; text: string }
  | { kind: 'discard'; text: string }
  | { kind: 'replace-record'; question: string; chosen: string; text: string }
  /** Replacing an unreadable ledger; `canKeep` when the cell can keep a copy under another key. */
  | { kind: 'replace-ledger'; canKeep: boolean; text: string };

/** The comparison tab: which branches, which axis, and the worker's numbers. */
export interface ComparisonView {
  /** Branches to compare, the reference first. */
  names: string[];
  axis: CompareAxis;
  data: { comparison: BranchComparison; traces: BranchTrace[]; batchOnly?: BatchOfBranch[] | null } | null;
}

/** A message for the user above the readouts. */
export interface Notice {
  level: 'info' | 'warn' | 'error';
  text: string;
}

/** Long work in progress. */
export interface BusyState {
  /** What is running, e.g. `Step ×1000`. */
  action: string;
  done: number;
  total: number;
}

/** Everything the widget shows. */
export interface CellViewState {
  /** What the cell's metadata held when last read (`reading`: being checked in the worker). */
  ledger: 'absent' | 'reading' | 'ok' | 'corrupt';
  /** Why the ledger could not be read (only when `ledger` is `corrupt`). */
  ledgerMessage?: string;
  /** Spec text the session belongs to (null before any session). */
  sessionSpec: string | null;
  /** True when the editor's text differs from {@link sessionSpec}. */
  specEdited: boolean;
  /** Problems of the editor's current text (live). */
  problems: SpecProblem[];
  /**
   * True when `problems` come from the files a saved session read (changed or unreadable), not
   * from the text: the text is fine, so Reset (start over from the files as they are) stays possible.
   */
  filesBlocked?: boolean;
  /** Warnings of the session's spec. */
  warnings: SpecProblem[];
  summary: SessionSummary | null;
  /** Record 0 to the current step. */
  trajectory: StepRecord[];
  busy: BusyState | null;
  /** Mean ms per step of the last stepping action. */
  msPerStep?: number;
  /** Without `msPerStep`: an upper bound on it when the steps were too fast to time (`msBound`). */
  msBelow?: number;
  /** Size of the last written ledger, bytes. */
  ledgerBytes?: number;
  /** The latest gradient audit of the active branch and the step it ran at. */
  audit: { step: number; result: AuditResult } | null;
  /** Outcome of the last Verify, one per branch replayed. */
  verify: VerifyResult[] | null;
  /** The latest curvature measurement of the active branch. */
  curvature: CurvatureResult | null;
  /** The active branch's sharpness trace (measured while stepping with tracking on), step order. */
  sharpness: SharpnessPoint[];
  /** The active branch's findings and the diagnosis readouts (from the worker or the ledger). */
  diagnosis: DiagnosisView;
  /** The active branch's latest complete deeper readout of each kind (from the worker or the ledger). */
  deeper: DeeperKept;
  /** The Deeper tab's chosen readout and the texts of its options. */
  deeperChoice: DeeperChoice;
  notice: Notice | null;
  /** An open inline form. */
  form: FormKind | null;
  /** Problems of the branch form's patch text (live, with lines in the patch text). */
  branchProblems: SpecProblem[];
  /** An action that waits for the user's confirmation. */
  confirm: Confirmation | null;
  comparison: ComparisonView;
  /** Text of the Step ×N box (empty: the default N of the settings). */
  stepN: string;
  tab: ReadoutTab;
  /** Defaults of the run-until form (last used). */
  runUntil: { condition: StopCondition; maxSteps: number };
}

/** The state of a cell before anything was read. */
export function initialViewState(): CellViewState {
  return {
    ledger: 'absent',
    sessionSpec: null,
    specEdited: false,
    problems: [],
    warnings: [],
    summary: null,
    trajectory: [],
    busy: null,
    audit: null,
    verify: null,
    curvature: null,
    sharpness: [],
    diagnosis: emptyDiagnosis(),
    deeper: {},
    deeperChoice: { ...DEFAULT_DEEPER_CHOICE },
    notice: null,
    form: null,
    branchProblems: [],
    confirm: null,
    comparison: { names: [], axis: 'step', data: null },
    stepN: '',
    tab: 'trace',
    runUntil: { condition: { kind: 'loss-below', value: 1e-3 }, maxSteps: 1000 }
  };
}

/** Adds new sharpness points, replacing any at the same step, in step order. */
export function mergeSharpness(old: SharpnessPoint[], fresh: SharpnessPoint[] | undefined): SharpnessPoint[] {
  if (fresh === undefined || fresh.length === 0) return old;
  const steps = new Set(fresh.map(p => p.step));
  return old.filter(p => !steps.has(p.step)).concat(fresh).sort((a, b) => a.step - b.step);
}

/**
 * The view-state changes after reading the cell's metadata: a restored session (step, trace,
 * status, without any engine), no session, or an unreadable ledger with its message.
 *
 * @param read - the ledger glue's verdict on `raw`.
 * @param raw - the metadata value (for its size).
 * @param source - the editor's text.
 * @param checkSpec - the live spec check.
 */
export function viewFromLedger(read: LedgerRead, raw: unknown, source: string, checkSpec: SpecChecker): Partial<CellViewState> {
  const cleared: Partial<CellViewState> = {
    audit: null, curvature: null, sharpness: [], diagnosis: emptyDiagnosis(), deeper: {}, verify: null, problems: checkSpec(source), confirm: null,
    comparison: { names: [], axis: 'step', data: null }
  };
  switch (read.kind) {
    case 'absent':
      return { ...cleared, ledger: 'absent', ledgerMessage: undefined, sessionSpec: null, specEdited: false, summary: null, trajectory: [] };
    case 'corrupt':
      return {
        ...cleared,
        ledger: 'corrupt',
        ledgerMessage: read.message,
        sessionSpec: null,
        summary: null,
        trajectory: [],
        notice: {
          level: 'error',
          text:
            `The saved Stepwell ledger of this cell cannot be read: ${read.message}. ` +
            'The spec text and the stored value are untouched. "Start over" replaces the unreadable ledger with a new session at step 0 (it asks first, and can keep a copy).'
        }
      };
    case 'ok':
      return {
        ...cleared,
        ledger: 'ok',
        ledgerMessage: undefined,
        ledgerBytes: read.content.bytes ?? new TextEncoder().encode(JSON.stringify(raw)).length,
        notice: null,
        sessionSpec: read.content.specText,
        specEdited: source !== read.content.specText,
        summary: read.content.summary,
        trajectory: read.content.trajectory,
        curvature: read.content.readouts.curvature,
        sharpness: read.content.readouts.sharpness,
        audit: read.content.readouts.audit,
        diagnosis: diagnosisOf(read.content.readouts),
        deeper: read.content.readouts.deeper ?? {}
      };
  }
}
