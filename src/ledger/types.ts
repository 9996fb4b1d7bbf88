/**
 * The ledger: the one value a stepwell cell keeps in notebook metadata. Plain JSON;
 * typed arrays are base64 of little-endian bytes so every number restores bit for bit.
 * The layout is described field by field in `ledger.schema.json`.
 */
import type { OptimizerName } from '../core/setup';

/** The cell-metadata key under which the ledger lives. */
export const LEDGER_KEY = 'stepwell';
/** Value of {@link Ledger.format}. */
export const LEDGER_FORMAT = 'stepwell-ledger';
/** The version this code writes (and the newest it reads). */
export const LEDGER_VERSION = 3;

/**
 * A scalar that JSON can carry exactly: a finite number other than -0 as itself, anything
 * else (NaN with its payload, ±Infinity, -0) as `"f64:"` + 16 hex digits of its bits.
 */
export type EncodedScalar = number | string;

/** {@link OptimizerState} with buffers as base64 float64. */
export interface EncodedOptimizerState {
  kind: OptimizerName;
  t: number;
  buffers: Record<string, string>;
  scalars: Record<string, EncodedScalar>;
}

/** {@link SessionState} in JSON form: `params` base64 float64, `order` base64 int32 or null. */
export interface EncodedSessionState {
  step: number;
  params: string;
  optimizer: EncodedOptimizerState;
  rng: { s: [number, number, number, number]; spare: EncodedScalar | null };
  epoch: number;
  cursor: number;
  order: string | null;
}

/** One saved state with its fingerprint (SHA-256 hex of the decoded state). */
export interface LedgerCheckpoint {
  step: number;
  fingerprint: string;
  state: EncodedSessionState;
}

/**
 * Step records in columns, each base64 float64 of `count` entries; the three layer
 * columns hold `count × layers` entries, record-major. `heldOutLoss` is present when
 * every record has one.
 */
export interface EncodedTrajectory {
  /** SHA-256 hex over count, layers and every column (see `trajectoryDigest`); exposes hand edits. */
  digest: string;
  count: number;
  layers: number;
  step: string;
  loss: string;
  batchLoss: string;
  heldOutLoss?: string;
  gradNorm: string;
  updateNorm: string;
  lr: string;
  evaluations: string;
  ms: string;
  layerWeightNorm: string;
  layerGradNorm: string;
  layerUpdateRatio: string;
}

/**
 * Readouts of one branch (see `readouts.ts`): plain JSON values with exact numbers, and a
 * digest over them.
 */
export interface LedgerReadouts {
  /** SHA-256 hex over the encoded readouts (see `readoutsDigest`); exposes hand edits. */
  digest: string;
  /** The latest curvature measurement (must carry an integer `step`). */
  curvature?: Record<string, unknown>;
  /** The sharpness trace, steps increasing (each point carries an integer `step`). */
  sharpness?: Record<string, unknown>[];
  /** The latest gradient audit (`{step, result}`). */
  audit?: Record<string, unknown>;
  /** The latest gradient noise scale (must carry an integer `step`). Version 3. */
  noise?: Record<string, unknown>;
  /** Activation health at step 0 (`start`) and at the branch's cursor (`now`). Version 3. */
  activations?: Record<string, unknown>;
  /** The initialization check of the branch's setup (without its activation health, which is `activations.start`). Version 3. */
  init?: Record<string, unknown>;
  /** The data checks of the branch's setup (features listed up to a bound). Version 3. */
  data?: Record<string, unknown>;
  /** The latest deeper readout of each kind (`line`, `plane`, `range`, `precision`, `batch`), each with a `step`. Added within version 3. */
  deeper?: Record<string, unknown>;
}

/**
 * One branch of the grove: the root (the spec as written) or a branch forked from a step of its
 * parent with a patch.
 */
export interface LedgerBranch {
  name: string;
  /** Where it was forked from; absent for the root. */
  parent?: { branch: string; step: number };
  /** Flat spec keys (`lr`, `layers[1].lrScale`, `model.init`, …) changed against the parent. */
  patch?: Record<string, unknown>;
  /** True when the patch changes the setup or seed: the branch started afresh at step 0. */
  restart?: boolean;
  /**
   * Step records, steps increasing. A forked branch keeps its records from at most its fork step
   * on; the records before its first one are its parent's.
   */
  trajectory: EncodedTrajectory;
  /** States before the head, steps strictly increasing. */
  checkpoints: LedgerCheckpoint[];
  /** The state at the branch's tip (the furthest step it reached). */
  head: LedgerCheckpoint;
  /**
   * The step the branch is shown at, when it lies before the head (the steps after it are kept
   * until discarded); a checkpoint at that step is always stored. Absent: at the head.
   */
  cursor?: number;
  readouts?: LedgerReadouts;
  /**
   * The files the branch's experiment read (data, targets, held-out data, initial weights), each
   * once, with the SHA-256 of their bytes; absent when it read none (or in ledgers written before).
   */
  files?: LedgerFile[];
}

/** A file a branch read: the name as written, its size in bytes, SHA-256 (hex) of its bytes. */
export interface LedgerFile {
  name: string;
  bytes: number;
  sha256: string;
}

/** The whole metadata value, format version 3. */
export interface Ledger {
  format: typeof LEDGER_FORMAT;
  version: typeof LEDGER_VERSION;
  /** Engine name and version, e.g. `stepwell 0.1.0`. */
  engine: string;
  /** The spec text exactly as the user wrote it. */
  spec: string;
  seed: number;
  /** SHA-256 hex of the UTF-8 bytes of `spec`. */
  specHash: string;
  /** SHA-256 hex of externally loaded data, when there is any. */
  dataHash?: string;
  /** Length of every params vector. */
  parameterCount: number;
  branches: LedgerBranch[];
  activeBranch: string;
  /**
   * The findings of every branch, each a plain object of the findings rules' shape with a
   * `branch` field naming its branch, branches in ledger order; numbers in the exact encoding of
   * `readouts.ts` (a non-finite `measured` survives). Version 2 carried untagged objects.
   */
  findings: Record<string, unknown>[];
  /** ISO-8601 time of writing; informational only. */
  savedAt?: string;
}

/** A problem in one field of a ledger; `message` is `"<field>: <detail>"`. */
export class LedgerError extends Error {
  /** Path of the field, like `branches[0].checkpoints[2].state.params`. */
  readonly field: string;
  /** What is wrong with it. */
  readonly detail: string;

  constructor(field: string, detail: string) {
    super(field ? `${field}: ${detail}` : detail);
    this.name = 'LedgerError';
    this.field = field;
    this.detail = detail;
  }
}
