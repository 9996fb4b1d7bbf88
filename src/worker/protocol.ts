/**
 * The typed message protocol between the notebook page and the engine worker.
 *
 * Every request carries a numeric `id`; every reply names the `id` it answers. A request
 * gets exactly one final reply (`ready`, `spec-errors`, `stepped`, `audit`, `snapshot`,
 * `verified` or `failed`) and, for long work, any number of `progress` replies before it.
 * `stop` is the one request without a reply of its own: it makes the running request end
 * early with `stopped: true`.
 *
 * All payloads are plain data (numbers, strings, arrays, typed arrays), so they cross the
 * worker boundary by structured clone without loss.
 */
import type { SessionState, StepRecord } from '../core/state';
import type { StopCondition } from '../core/session';
import type { AuditResult } from '../core/probe/gradcheck';
import type { CurvatureSummary } from '../core/probe/curvature';

export type { StopCondition, AuditResult, CurvatureSummary };

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
  /** Threads that computed it: 2 when the density and trace ran in the readout helper. */
  threads?: number;
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

/** The outcome of replaying the trajectory from the seed. */
export interface VerifyResult {
  /** `bit-identical`: every compared value equal bit for bit; `differs`: see `firstDifferingStep`. */
  match: 'bit-identical' | 'differs';
  /** Steps replayed. */
  steps: number;
  /** First step whose record or checkpoint fingerprint differed (only when `match` is `differs`). */
  firstDifferingStep?: number;
  /** Fingerprint of the live session. */
  expected: string;
  /** Fingerprint reached by the replay. */
  actual: string;
}

/** Requests from the page to the worker. */
export type EngineRequest =
  | {
      id: number;
      kind: 'load';
      /** The cell's spec text. */
      specText: string;
      /** Saved state to resume from (from the ledger); absent = fresh session at step 0. */
      resume?: {
        state: SessionState;
        trajectory: StepRecord[];
        checkpoints: CheckpointData[];
      };
      /** Auto-checkpoint interval in steps (0 = only step 0). */
      checkpointEvery: number;
    }
  /** `sharpnessEvery` > 0 also measures the sharpness every that many steps (and at the start). */
  | { id: number; kind: 'step'; n: number; sharpnessEvery?: number }
  | { id: number; kind: 'run-until'; condition: StopCondition; maxSteps: number }
  | { id: number; kind: 'reset' }
  | { id: number; kind: 'rewind'; step: number }
  | { id: number; kind: 'gradcheck'; sample: number }
  /** Measure the Hessian spectrum at the current weights: `k` eigenvalues per end, dense up to `denseLimit` parameters. */
  | { id: number; kind: 'curvature'; k: number; denseLimit: number }
  | { id: number; kind: 'snapshot' }
  /** Build the cell's ledger in the worker; `specText` is the text the session belongs to. */
  | { id: number; kind: 'ledger'; specText: string; checkpointCap: number }
  | { id: number; kind: 'verify' }
  | { id: number; kind: 'stop'; target: number };

/** Kinds of {@link EngineRequest}. */
export type EngineRequestKind = EngineRequest['kind'];

/** Summary of the live session sent with most replies. */
export interface SessionSummary {
  /** Updates applied. */
  step: number;
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
      /** An even sample (≤ 5000, first and last included) of the trajectory. */
      trajectory: StepRecord[];
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
    }
  | {
      id: number;
      kind: 'rewound';
      summary: SessionSummary;
      /** An even sample (≤ 5000) of the trajectory after the rewind. */
      trajectory: StepRecord[];
    }
  | {
      id: number;
      kind: 'audit';
      /** Step at which the audit ran. */
      step: number;
      result: AuditResult;
    }
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
  | { id: number; kind: 'curvature'; result: CurvatureResult }
  | { id: number; kind: 'verified'; result: VerifyResult }
  | { id: number; kind: 'failed'; message: string };

/** Kinds of {@link EngineReply}. */
export type EngineReplyKind = EngineReply['kind'];

/** Kinds of reply that end a request. */
export const FINAL_REPLIES: readonly EngineReplyKind[] = [
  'ready',
  'spec-errors',
  'stepped',
  'rewound',
  'audit',
  'curvature',
  'snapshot',
  'ledger',
  'verified',
  'failed'
];

/** True when `reply` is the last reply to its request. */
export function isFinalReply(reply: EngineReply): boolean {
  return reply.kind !== 'progress';
}

const REQUEST_KINDS: readonly EngineRequestKind[] = [
  'load',
  'step',
  'run-until',
  'reset',
  'rewind',
  'gradcheck',
  'curvature',
  'snapshot',
  'ledger',
  'verify',
  'stop'
];

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
      return positiveInt('checkpointEvery');
    case 'step':
      return positiveInt('n') ?? (r.sharpnessEvery === undefined ? null : positiveInt('sharpnessEvery'));
    case 'run-until':
      return positiveInt('maxSteps');
    case 'rewind':
      return positiveInt('step');
    case 'gradcheck':
      return positiveInt('sample');
    case 'curvature':
      return positiveInt('k') ?? positiveInt('denseLimit');
    case 'stop':
      return positiveInt('target');
    case 'ledger':
      if (typeof r.specText !== 'string') return 'request.specText must be a string';
      return positiveInt('checkpointCap');
    case 'reset':
    case 'snapshot':
    case 'verify':
      return null;
  }
}
