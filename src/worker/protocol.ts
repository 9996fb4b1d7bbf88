/**
 * The typed message protocol between the notebook page and the engine worker.
 *
 * Every request carries a numeric `id`; every reply names the `id` it answers. A request
 * gets exactly one final reply (`ready`, `spec-errors`, `stepped`, `audit`, `noise`, `snapshot`,
 * `verified`, … or `failed`) and, for long work, any number of `progress` replies before it.
 * `stop` is the one request without a reply of its own: it makes the running request end
 * early with `stopped: true`.
 *
 * All payloads are plain data (numbers, strings, arrays, typed arrays), so they cross the
 * worker boundary by structured clone without loss.
 */
import { LIMIT_NAMES, type SpecLimits } from '../experiment/limits';
import type { SpecPatch } from '../experiment/patch';
import type { LedgerViewResult } from './ledger-view';
import type { SessionState, StepRecord } from '../core/state';
import type { Standardization } from '../core/setup';
import type { BranchComparison, StopCondition } from '../core/session';
import type { AuditResult } from '../core/probe/gradcheck';
import type { CurvatureSummary, StabilityVerdict, TraceVerdict } from '../core/probe/curvature';
import type { ActivationHealth } from '../core/probe/activation-health';
import type { InitCheck } from '../core/probe/init-check';
import type { DataReport } from '../core/probe/data-checks';
import type { NoiseScale } from '../core/probe/noise-scale';
import type { LayerBalance } from '../core/probe/balance';
import type { Generalization } from '../core/probe/generalization';
import type { Finding } from '../core/probe/findings/types';
import type { DeeperKept, DeeperRequest, DeeperResult } from './deeper';
import { deeperRequestProblem } from './deeper';
import type { BatchOfBranch } from './batch-branches';

export type { StopCondition, AuditResult, CurvatureSummary, BranchComparison, Finding };

/** A curvature measurement at one step (the spectrum's ends and its summary). */
export interface CurvatureResult {
  /** Step of the measurement. */
  step: number;
  method: 'dense' | 'lanczos';
  parameterCount: number;
  /** Largest eigenvalues, descending, and their absolute error bounds. */
  top: number[];
  topBounds: number[];
  /** Smallest eigenvalues, ascending, and their absolute error bounds. */
  bottom: number[];
  bottomBounds: number[];
  /** Hessian-vector products spent. */
  products: number;
  /** `converged`, or why the eigen-solve stopped early. */
  stop: string;
  summary: CurvatureSummary;
  /** The verdict on the learning rate in effect and the sentence that says it (`core/probe/curvature/verdicts.ts`). */
  verdict: StabilityVerdict;
  sentence: string;
  /** The limit line on the plain Hessian's eigenvalues (factor/η), null when the rule bounds another matrix or none applies (core's `eigenvalueLimit`). */
  limitLine: number | null;
  /** Per entry of `top` and `bottom`: whether it lies above `limitLine` (core's `eigenvaluesAbove`). */
  aboveTop: boolean[];
  aboveBottom: boolean[];
  /** Threads that computed it: 2 when the density and trace ran in the readout helper. */
  threads?: number;
  /** Set when its products fused multiply-adds (WebAssembly relaxed SIMD): last bits differ from engines without. */
  fused?: true;
  /**
   * Set on the early readout of the top end alone, shown while the bottom end, the spectral
   * density and the trace are still being measured; never stored.
   */
  partial?: true;
}

/** One problem in the spec text, at a path and (when known) a 1-based line and column. */
export interface SpecProblem {
  /** Dotted path into the spec, e.g. `recipe.lr`. */
  path: string;
  /** What is wrong and what would be accepted. */
  message: string;
  /** 1-based line in the spec text, when the parser could locate it. */
  line?: number;
  /** 1-based column in the spec text. */
  col?: number;
}

/** One sharpness measurement while stepping: the sharpness the stability rule uses and its limit. */
export interface SharpnessPoint {
  step: number;
  /** λmax of the Hessian. */
  lambdaMax: number;
  /** The sharpness the recipe's rule uses (λmax, or of the preconditioned matrix for adaptive optimizers). */
  sharpness: number;
  /** The largest sharpness the learning rate in effect tolerates (factor/η), or null when no rule applies. */
  limit: number | null;
  /** True when `sharpness` is of a preconditioned matrix. */
  preconditioned: boolean;
  /** Whether `sharpness` lies above `limit` (core's `aboveLimit`; derived, recomputed when a ledger is read). */
  above: boolean;
  /** The learning rate in effect at the step (schedule and warm-up applied); absent in points stored by ledger version 2. */
  lr?: number;
}

/** A saved session state at one step. */
export interface CheckpointData {
  /** Step of the state. */
  step: number;
  /** Fingerprint of the state (hex). */
  fingerprint: string;
  /** The state itself. */
  state: SessionState;
}

/** One branch of the cell's grove, as the branch bar shows it (computed in the worker). */
export interface BranchInfo {
  name: string;
  /** The branch it was forked from (null for the root). */
  parent: string | null;
  /** Step of the parent it was forked at (null for the root). */
  forkStep: number | null;
  /** Flat spec keys changed against the parent, e.g. `{ lr: 0.05 }` (empty for the root). */
  patch: Record<string, unknown>;
  /** The patch as `lr=0.05, model.init=he-normal` (empty for the root). */
  patchText: string;
  /** True when the patch changes the setup or seed: the branch started afresh at step 0. */
  restart: boolean;
  /** The branch's cursor (the step its session is at). */
  step: number;
  /** The furthest step it reached (> step when later steps are kept after a rewind). */
  tip: number;
  /** Training loss at the cursor (NaN when the record is not kept). */
  loss: number;
  /** Fingerprint of the state at the cursor. */
  fingerprint: string;
  /** One-line recipe, e.g. `sgd η=0.05, full batch`. */
  recipe: string;
}

/**
 * The readouts of a branch: the measurements it keeps (and the ledger stores) — latest
 * curvature, sharpness trace, latest audit and noise scale, activation health at step 0 and at
 * the cursor, the initialization and data checks — its findings, and what the worker derives
 * from them and the trajectory.
 */
export interface BranchReadouts {
  curvature: CurvatureResult | null;
  /** Sharpness measured while stepping with tracking on, step order. */
  sharpness: SharpnessPoint[];
  audit: { step: number; result: AuditResult } | null;
  /** The latest gradient noise scale (measured on request). */
  noise: NoiseScale | null;
  /** Activation health at step 0 (the initialization check's) and at the branch's cursor. */
  activations: { start: ActivationHealth | null; now: ActivationHealth | null };
  /** The initialization check of the branch's setup (null for analytic objectives). */
  init: InitCheck | null;
  /** The data checks of the branch's setup (features listed up to {@link DATA_FEATURES_KEPT}; null for analytic objectives). */
  data: DataReport | null;
  /** The branch's findings at its cursor, most severe first (`evaluateFindings`). */
  findings: Finding[];
  /** The latest complete deeper readout of each kind taken on the branch (`worker/deeper.ts`). */
  deeper: DeeperKept;
  derived: DerivedReadouts;
}

/** What the worker derives from a branch's trajectory and readouts: never stored, recomputed from what is. */
export interface DerivedReadouts {
  /** Layer balance over time (`core/probe/balance.ts`), up to {@link BALANCE_ROWS} rows; null without layers. */
  balance: LayerBalance | null;
  /** Held-out against training loss (`core/probe/generalization.ts`), its series sampled to {@link GENERALIZATION_POINTS}; null without a held-out split. */
  generalization: Generalization | null;
  /** The verdict on the sharpness trace and its sentence (`core/probe/curvature/verdicts.ts`). */
  sharpness: { verdict: TraceVerdict; sentence: string };
  /** The standardization applied to the inputs (`data.standardize`), or null. */
  standardization: Standardization | null;
  /** Per finding (same order): the branch forked from this one with exactly its proposal, or null. */
  tried: (string | null)[];
}

/** Most features a data report keeps (the ledger stores it; the rest are summarized by the report's counts). */
export const DATA_FEATURES_KEPT = 200;
/** Most rows (steps) of the layer-balance table a reply carries. */
export const BALANCE_ROWS = 60;
/** Most points of each generalization series a reply carries. */
export const GENERALIZATION_POINTS = 500;

/** One branch's data for the comparison figures and the decision record. */
export interface BranchTrace {
  name: string;
  parent: string | null;
  forkStep: number | null;
  patchText: string;
  restart: boolean;
  /** One-line recipe. */
  recipe: string;
  /** An even sample (≤ {@link COMPARE_POINTS}) of the trajectory from step 0 to the tip: steps, examples drawn (null without data rows), losses. */
  steps: number[];
  examples: number[] | null;
  loss: number[];
  heldOut: number[] | null;
  sharpness: SharpnessPoint[];
  /** Cursor and tip with the fingerprints of their states. */
  step: number;
  fingerprint: string;
  tip: number;
  tipFingerprint: string;
  /** `seed`, the patched `recipe` mapping and any setup keys the patches set, as YAML. */
  recipeYaml: string;
  /** The branch's findings at its cursor, most severe first, and per finding the branch that tried its proposal (or null). */
  findings: Finding[];
  tried: (string | null)[];
}

/** Most points per branch a comparison trace carries. */
export const COMPARE_POINTS = 2000;

/** The outcome of replaying the trajectory from the seed. */
export interface VerifyResult {
  /** The branch replayed. */
  branch: string;
  /** `bit-identical`: every compared value equal bit for bit; `differs`: see `firstDifferingStep`. */
  match: 'bit-identical' | 'differs';
  /** Steps replayed (to the branch's tip). */
  steps: number;
  /** First step whose record or checkpoint fingerprint differed (only when `match` is `differs`). */
  firstDifferingStep?: number;
  /** Fingerprint of the live session. */
  expected: string;
  /** Fingerprint reached by the replay. */
  actual: string;
}

/**
 * Files a spec names (data, weights), read by the page relative to the notebook: the bytes keyed
 * by the name as the spec writes it (each buffer transferred, not copied), and why a name could
 * not be read (not found, too large, a folder), which the spec error at that key then says.
 */
export interface SpecFilesPayload {
  files?: Record<string, Uint8Array>;
  fileProblems?: Record<string, string>;
}

/** Requests from the page to the worker. */
export type EngineRequest =
  | ({
      id: number;
      kind: 'load';
      /** The cell's spec text. */
      specText: string;
      /** The cell's stored ledger (any readable version) to resume every branch from; absent = a fresh grove at step 0. */
      resume?: object;
      /** Auto-checkpoint interval in steps (0 = only step 0). */
      checkpointEvery: number;
      /** Size limits of the spec and every branch's patched spec (the user's settings; default `DEFAULT_SPEC_LIMITS`). */
      limits?: SpecLimits;
    } & SpecFilesPayload)
  /**
   * Open a stored ledger for display without loading it: validated and decoded whole here, off the
   * page thread (`worker/ledger-view.ts`); the engine's own session is not touched.
   */
  | { id: number; kind: 'open'; ledger: unknown; limits?: SpecLimits }
  /**
   * Check spec text (the editor's, as the user types, or before a run) without loading it: parsing
   * 10⁵ inline rows takes seconds. The reply also names the files the text names (with each chain
   * of `chains` applied, for a fork), so the page never parses the spec itself.
   */
  | { id: number; kind: 'check'; specText: string; limits?: SpecLimits; chains?: SpecPatch[][] }
  /** `sharpnessEvery` > 0 also measures the sharpness every that many steps (and at the start). */
  | { id: number; kind: 'step'; n: number; sharpnessEvery?: number }
  | { id: number; kind: 'run-until'; condition: StopCondition; maxSteps: number }
  | { id: number; kind: 'reset' }
  /** Move the active branch's cursor to `step` (≤ its tip); later steps are kept. */
  | { id: number; kind: 'rewind'; step: number }
  /** Drop the steps the active branch keeps after its cursor. */
  | { id: number; kind: 'discard' }
  /** Fork a branch from `from` (default: the active branch) at `step` with `patch` (flat spec keys); it becomes active. */
  | ({ id: number; kind: 'fork'; step: number; patch: Record<string, unknown>; name?: string; from?: string } & SpecFilesPayload)
  | { id: number; kind: 'switch'; branch: string }
  | { id: number; kind: 'rename'; branch: string; to: string }
  /** Delete a branch and the branches forked from it (never the root). */
  | { id: number; kind: 'delete'; branch: string }
  /** Compare branches at matched steps (the first is the reference unless `reference` says otherwise). */
  | { id: number; kind: 'compare'; branches: string[]; reference?: string }
  | { id: number; kind: 'gradcheck'; sample: number }
  /** Measure the gradient noise scale at the current weights from `sample` rows' gradients. */
  | { id: number; kind: 'noise'; sample: number }
  /** Measure the Hessian spectrum at the current weights: `k` eigenvalues per end, dense up to `denseLimit` parameters. */
  | { id: number; kind: 'curvature'; k: number; denseLimit: number }
  | { id: number; kind: 'snapshot' }
  /**
   * Take one deeper readout (line, plane, range test, precision, batch sizes) at the active
   * branch's cursor, in slices with progress; a stop discards it (the reply says `stopped`).
   */
  | { id: number; kind: 'deeper'; request: DeeperRequest }
  /** Build the cell's ledger in the worker; `specText` is the text the session belongs to. */
  | { id: number; kind: 'ledger'; specText: string; checkpointCap: number; maxBytes?: number }
  /** Replay branches from the seed (default: the active one) and compare bit for bit. */
  | { id: number; kind: 'verify'; branches?: string[] }
  | { id: number; kind: 'stop'; target: number };

/** Kinds of {@link EngineRequest}. */
export type EngineRequestKind = EngineRequest['kind'];

/** Summary of the active branch (and the list of all branches) sent with most replies. */
export interface SessionSummary {
  /** The active branch. */
  branch: string;
  /** Updates applied (the active branch's cursor). */
  step: number;
  /** The furthest step the active branch reached. */
  tip: number;
  /** Every branch of the grove, parents before children. */
  branches: BranchInfo[];
  /** Fingerprint of the current state (hex). */
  fingerprint: string;
  /** Number of parameters. */
  parameterCount: number;
  /** Steps at which checkpoints exist, ascending. */
  checkpointSteps: number[];
  /** One-line description of the recipe, e.g. `sgd η=0.05 μ=0.9, full batch`. */
  recipe: string;
  /** One-line description of the setup, e.g. `network 3→16 tanh→1 linear, mse`. */
  setup: string;
}

/** Replies from the worker to the page. */
export type EngineReply =
  | {
      id: number;
      kind: 'ready';
      summary: SessionSummary;
      /** An even sample (≤ 5000, first and last included) of the active branch's trajectory. */
      trajectory: StepRecord[];
      readouts: BranchReadouts;
      warnings: SpecProblem[];
    }
  | { id: number; kind: 'spec-errors'; errors: SpecProblem[] }
  | {
      id: number;
      kind: 'progress';
      /** Steps done in this request so far. */
      done: number;
      /** Steps requested (cap for `run-until`). */
      total: number;
      /** An even sample (≤ 100) of the records produced since the previous progress message. */
      records: StepRecord[];
      /** Sharpness measured since the previous progress message. */
      sharpness?: SharpnessPoint[];
      /** The active branch's readouts with fresh findings (at most about once a second of work). */
      readouts?: BranchReadouts;
      /** A curvature readout's top end, sent before the complete readout (`partial` set). */
      curvature?: CurvatureResult;
    }
  | {
      id: number;
      kind: 'stepped';
      summary: SessionSummary;
      /** An even sample (≤ 100, last included) of the records produced since the last progress message. */
      records: StepRecord[];
      /** Sharpness measured since the last progress message. */
      sharpness?: SharpnessPoint[];
      /** True when a stop request ended the work early. */
      stopped: boolean;
      /** Why the work ended. */
      reason: 'done' | 'stopped' | 'condition' | 'non-finite';
      /**
       * With `non-finite`: the step whose loss was not finite and that loss. That step was dropped;
       * the branch stays at the state before it (never a non-finite head).
       */
      nonFinite?: { step: number; loss: number };
      /** Updates applied by this request. */
      updates: number;
      /** Wall time of those updates in ms (sharpness measurements, findings and yields excluded). */
      elapsedMs: number;
      /** The active branch's readouts, findings evaluated at its new step. */
      readouts: BranchReadouts;
    }
  | {
      id: number;
      kind: 'rewound';
      summary: SessionSummary;
      /** An even sample (≤ 5000) of the trajectory to the tip after the rewind. */
      trajectory: StepRecord[];
      readouts: BranchReadouts;
    }
  | {
      id: number;
      /** After fork, switch, rename, delete and discard. */
      kind: 'branched';
      summary: SessionSummary;
      /** An even sample (≤ 5000) of the active branch's trajectory. */
      trajectory: StepRecord[];
      readouts: BranchReadouts;
      /** Branches deleted (delete only). */
      removed?: string[];
      /** Kept steps dropped (discard only). */
      dropped?: number;
    }
  /** A patch that does not validate against the spec (line:column within the patch text is the page's business). */
  | { id: number; kind: 'patch-errors'; errors: SpecProblem[] }
  /** `batchOnly`: the branches' batch sizes when they differ only in batch size (`worker/batch-branches.ts`), else null. */
  | { id: number; kind: 'comparison'; comparison: BranchComparison; traces: BranchTrace[]; batchOnly?: BatchOfBranch[] | null }
  | {
      id: number;
      kind: 'audit';
      /** Step at which the audit ran. */
      step: number;
      result: AuditResult;
      /** The active branch's readouts with the findings re-evaluated. */
      readouts: BranchReadouts;
    }
  | { id: number; kind: 'noise'; result: NoiseScale; readouts: BranchReadouts }
  | {
      id: number;
      kind: 'snapshot';
      summary: SessionSummary;
      state: SessionState;
      trajectory: StepRecord[];
      checkpoints: CheckpointData[];
    }
  | {
      id: number;
      kind: 'ledger';
      summary: SessionSummary;
      /** The complete, validated ledger value to store under the cell's metadata key. */
      value: object;
      /** UTF-8 size of the value's JSON. */
      bytes: number;
      /** An even sample (≤ 5000) of the trajectory, for display. */
      trajectory: StepRecord[];
    }
  /** The curvature readout (null when stopped: nothing was kept) and the branch's readouts with it kept. */
  | { id: number; kind: 'curvature'; result: CurvatureResult | null; stopped: boolean; readouts: BranchReadouts }
  /** The deeper readout taken (null when stopped: nothing was kept) and the branch's readouts with it kept. */
  | { id: number; kind: 'deeper'; result: DeeperResult | null; stopped: boolean; readouts: BranchReadouts }
  /** `result` is the first branch's; `results` has one per branch replayed. */
  | { id: number; kind: 'verified'; result: VerifyResult; results: VerifyResult[] }
  /** What a stored ledger shows, or every problem that makes it unreadable (`open`). */
  | { id: number; kind: 'opened'; result: LedgerViewResult }
  /** The problems of checked spec text (empty when it parses) and the files it names (`cellFileNames`). */
  | { id: number; kind: 'checked'; errors: SpecProblem[]; files: string[] }
  | { id: number; kind: 'failed'; message: string };

const REQUEST_KINDS: readonly EngineRequestKind[] = [
  'load',
  'open',
  'check',
  'step',
  'run-until',
  'reset',
  'rewind',
  'discard',
  'fork',
  'switch',
  'rename',
  'delete',
  'compare',
  'gradcheck',
  'noise',
  'curvature',
  'snapshot',
  'deeper',
  'ledger',
  'verify',
  'stop'
];

/** Why `value` is not a set of spec limits (every limit a positive safe integer), or null. */
function limitsProblem(value: unknown): string | null {
  if (value === undefined) return null;
  if (typeof value !== 'object' || value === null || Array.isArray(value)) return 'request.limits must be a mapping of limit names to numbers';
  const l = value as Record<string, unknown>;
  for (const k of LIMIT_NAMES) {
    const v = l[k];
    if (typeof v !== 'number' || !Number.isSafeInteger(v) || v < 1) return `request.limits.${k} must be a positive integer, got ${String(v)}`;
  }
  return null;
}

/**
 * Checks the envelope of a message that claims to be a request (the worker's boundary).
 *
 * @returns null when well-formed, else a message naming the bad field.
 */
export function checkRequest(value: unknown): string | null {
  if (typeof value !== 'object' || value === null) return 'request must be an object';
  const r = value as Record<string, unknown>;
  if (typeof r.id !== 'number' || !Number.isInteger(r.id)) return 'request.id must be an integer';
  if (typeof r.kind !== 'string' || !REQUEST_KINDS.includes(r.kind as EngineRequestKind)) {
    return `request.kind must be one of ${REQUEST_KINDS.join(', ')}, got ${String(r.kind)}`;
  }
  const positiveInt = (field: string): string | null => {
    const v = r[field];
    return typeof v === 'number' && Number.isInteger(v) && v >= 0
      ? null
      : `request.${field} must be a non-negative integer, got ${String(v)}`;
  };
  switch (r.kind as EngineRequestKind) {
    case 'load':
      if (typeof r.specText !== 'string') return 'request.specText must be a string';
      return positiveInt('checkpointEvery') ?? limitsProblem(r.limits) ?? checkFiles(r);
    case 'open':
      return limitsProblem(r.limits);
    case 'check':
      if (r.chains !== undefined && !(Array.isArray(r.chains) && r.chains.every(Array.isArray))) return 'request.chains must be a list of lists of spec patches';
      return typeof r.specText !== 'string' ? 'request.specText must be a string' : limitsProblem(r.limits);
    case 'step':
      return positiveInt('n') ?? (r.sharpnessEvery === undefined ? null : positiveInt('sharpnessEvery'));
    case 'run-until':
      return positiveInt('maxSteps');
    case 'rewind':
      return positiveInt('step');
    case 'gradcheck':
    case 'noise':
      return positiveInt('sample');
    case 'curvature':
      return positiveInt('k') ?? positiveInt('denseLimit');
    case 'stop':
      return positiveInt('target');
    case 'deeper':
      return deeperRequestProblem(r.request);
    case 'ledger':
      if (typeof r.specText !== 'string') return 'request.specText must be a string';
      return positiveInt('checkpointCap') ?? (r.maxBytes === undefined ? null : positiveInt('maxBytes'));
    case 'fork':
      if (typeof r.patch !== 'object' || r.patch === null || Array.isArray(r.patch)) return 'request.patch must be a mapping of spec keys to values';
      if (r.name !== undefined && typeof r.name !== 'string') return 'request.name must be a string';
      if (r.from !== undefined && typeof r.from !== 'string') return 'request.from must be a string';
      return positiveInt('step') ?? checkFiles(r);
    case 'switch':
    case 'delete':
      return typeof r.branch === 'string' ? null : 'request.branch must be a string';
    case 'rename':
      return typeof r.branch !== 'string' ? 'request.branch must be a string' : typeof r.to === 'string' ? null : 'request.to must be a string';
    case 'compare':
      return Array.isArray(r.branches) && r.branches.length > 0 && r.branches.every(b => typeof b === 'string') ? null : 'request.branches must be a non-empty list of branch names';
    case 'verify':
      return r.branches === undefined || (Array.isArray(r.branches) && r.branches.every(b => typeof b === 'string')) ? null : 'request.branches must be a list of branch names';
    case 'reset':
    case 'discard':
    case 'snapshot':
      return null;
  }
}

/** Checks the optional file fields of a load or fork request. */
function checkFiles(r: Record<string, unknown>): string | null {
  const isMap = (v: unknown): v is Record<string, unknown> => typeof v === 'object' && v !== null && !Array.isArray(v);
  if (r.files !== undefined && !(isMap(r.files) && Object.values(r.files).every(b => b instanceof Uint8Array))) return 'request.files must map file names to bytes (Uint8Array)';
  if (r.fileProblems !== undefined && !(isMap(r.fileProblems) && Object.values(r.fileProblems).every(m => typeof m === 'string'))) return 'request.fileProblems must map file names to messages';
  return null;
}
