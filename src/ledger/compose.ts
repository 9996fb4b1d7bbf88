/**
 * Builds a complete ledger from live session data in one go: thin, encode, fingerprint,
 * then validate the finished value. Either a whole, valid ledger comes back or a
 * {@link LedgerError} is thrown — never half a value — so the caller can write it to
 * metadata with one `setMetadata` call.
 */
import { fingerprintState } from '../core/session/state-data';
import type { SessionState, StepRecord } from '../core/state';
import { decodeSessionState, decodeTrajectory, encodeSessionState, encodeTrajectory } from './codec';
import { sha256Hex } from './hash';
import { capTrajectory, thinCheckpoints } from './caps';
import { LEDGER_FORMAT, LEDGER_VERSION, LedgerError } from './types';
import type { Ledger, LedgerBranch, LedgerCheckpoint, LedgerFile } from './types';
import { validateLedger } from './check';
import { decodeReadouts, encodeFindings, encodeReadouts } from './readouts';
import type { DecodedReadouts, ReadoutsInput } from './readouts';

/** Size limits applied while building. */
export interface LedgerLimits {
  /** Checkpoints per branch, head included (mandatory ones may exceed it). Default 24. */
  maxCheckpoints: number;
  /** Step records per branch before thinning starts. Default 1000. */
  maxRecords: number;
}

/** Default {@link LedgerLimits}: roughly 200 kB for a 1000-step run of a 3-layer model. */
export const DEFAULT_LEDGER_LIMITS: Readonly<LedgerLimits> = { maxCheckpoints: 24, maxRecords: 1000 };

/** One branch as the session holds it. */
export interface BranchInput {
  name: string;
  parent?: { branch: string; step: number };
  /** Flat spec keys changed against the parent (see `experiment/patch.ts`). */
  patch?: Record<string, unknown>;
  /** True when the patch changed the setup or seed (the branch started at step 0 afresh). */
  restart?: boolean;
  /** Step records to the tip, steps increasing (a forked branch's records before its fork step are dropped here). */
  trajectory: readonly StepRecord[];
  /** Saved states before the head (any subset; thinned here). */
  checkpoints: readonly SessionState[];
  /** The state at the tip. */
  head: SessionState;
  /** The state at the cursor, when the branch is shown before its tip (always kept). */
  cursor?: SessionState;
  /** Latest curvature, sharpness trace, latest audit and the diagnosis readouts (plain data; see `readouts.ts`). */
  readouts?: ReadoutsInput;
  /** Checkpoint steps the user pinned; never thinned away. */
  pinned?: readonly number[];
  /** Record steps that findings refer to; never thinned away. */
  keepRecords?: readonly number[];
  /** The files the branch's experiment read (name, bytes, SHA-256), each once. */
  files?: readonly LedgerFile[];
}

/** Everything {@link buildLedger} needs. */
export interface LedgerInput {
  /** Engine name and version, e.g. `stepwell 0.1.0`. */
  engine: string;
  /** The spec text exactly as written. */
  spec: string;
  seed: number;
  parameterCount: number;
  dataHash?: string;
  branches: readonly BranchInput[];
  activeBranch: string;
  /** Findings of every branch, each with a `branch` field naming it (numbers may be non-finite; encoded exactly). */
  findings?: readonly Record<string, unknown>[];
  /** Defaults to the current time; pass a fixed value for reproducible output. */
  savedAt?: string;
  limits?: Partial<LedgerLimits>;
}

/** Runs `fn`, prefixing any LedgerError's field with `prefix`. */
function within<T>(prefix: string, fn: () => T): T {
  try {
    return fn();
  } catch (err) {
    if (err instanceof LedgerError) throw new LedgerError(err.field ? `${prefix}.${err.field}` : prefix, err.detail);
    throw new LedgerError(prefix, err instanceof Error ? err.message : String(err));
  }
}

/** A deep copy of JSON data that refuses what JSON would silently change (NaN, ±Infinity, undefined, functions). */
function jsonCopy(v: unknown, field: string): unknown {
  if (v === null || typeof v === 'string' || typeof v === 'boolean') return v;
  if (typeof v === 'number') {
    if (!Number.isFinite(v)) throw new LedgerError(field, `is ${v}, which JSON cannot hold; store it with encodeScalar`);
    return v;
  }
  if (Array.isArray(v)) return v.map((x, i) => jsonCopy(x, `${field}[${i}]`));
  if (typeof v === 'object' && Object.getPrototypeOf(v) === Object.prototype) {
    const out: Record<string, unknown> = {};
    for (const [k, x] of Object.entries(v as Record<string, unknown>)) if (x !== undefined) out[k] = jsonCopy(x, `${field}.${k}`);
    return out;
  }
  throw new LedgerError(field, `is ${typeof v === 'object' ? 'a class instance or typed array' : typeof v}, which is not plain JSON`);
}

function checkpoint(s: SessionState): LedgerCheckpoint {
  return { step: s.step, fingerprint: fingerprintState(s), state: encodeSessionState(s) };
}

function buildBranch(b: BranchInput, extraPins: readonly number[], limits: LedgerLimits): LedgerBranch {
  const byStep = new Map<number, SessionState>();
  const pins = [...(b.pinned ?? []), ...extraPins];
  if (b.cursor !== undefined && b.cursor.step < b.head.step) {
    byStep.set(b.cursor.step, b.cursor);
    pins.push(b.cursor.step);
  }
  b.checkpoints.forEach((s, k) => {
    if (s.step > b.head.step) throw new LedgerError(`checkpoints[${k}]`, `is at step ${s.step}, after the head (step ${b.head.step})`);
    if (s.step === b.head.step) return; // the head itself
    if (byStep.has(s.step) && s.step !== b.cursor?.step) throw new LedgerError(`checkpoints[${k}]`, `is a second checkpoint at step ${s.step}`);
    if (!byStep.has(s.step)) byStep.set(s.step, s);
  });
  const kept = thinCheckpoints([...byStep.keys(), b.head.step], limits.maxCheckpoints, pins);
  // A forked branch stores its own records only: from its fork step on (the earlier ones are its parent's).
  const own = b.parent ? b.trajectory.filter((r) => r.step >= (b.parent as { step: number }).step) : b.trajectory;
  const checkpoints = kept.filter((step) => step !== b.head.step).map((step) => within(`checkpoints(step ${step})`, () => checkpoint(byStep.get(step) as SessionState)));
  const branch: LedgerBranch = {
    name: b.name,
    trajectory: within('trajectory', () => encodeTrajectory(capTrajectory(own, limits.maxRecords, b.keepRecords ?? []))),
    checkpoints,
    head: within('head', () => checkpoint(b.head)),
  };
  if (b.parent) branch.parent = { branch: b.parent.branch, step: b.parent.step };
  if (b.patch) branch.patch = jsonCopy(b.patch, 'patch') as Record<string, unknown>;
  if (b.restart) branch.restart = true;
  if (b.cursor !== undefined && b.cursor.step < b.head.step) branch.cursor = b.cursor.step;
  const readouts = within('readouts', () => encodeReadouts(b.readouts));
  if (readouts !== undefined) branch.readouts = readouts;
  if (b.files !== undefined && b.files.length > 0) branch.files = b.files.map((f) => ({ name: f.name, bytes: f.bytes, sha256: f.sha256 }));
  return branch;
}

/**
 * Builds and validates a complete ledger. Checkpoints are thinned (first, head, pins and
 * the fork points of child branches always survive) and trajectories capped per `limits`.
 * @throws LedgerError naming the field when anything cannot be encoded or the result is invalid.
 */
export function buildLedger(input: LedgerInput): Ledger {
  const limits: LedgerLimits = { ...DEFAULT_LEDGER_LIMITS, ...(input.limits ?? {}) };
  const forks = new Map<string, number[]>();
  for (const b of input.branches) if (b.parent) forks.set(b.parent.branch, [...(forks.get(b.parent.branch) ?? []), b.parent.step]);
  const branches = input.branches.map((b, i) => within(`branches[${i}]`, () => buildBranch(b, forks.get(b.name) ?? [], limits)));
  const ledger: Ledger = {
    format: LEDGER_FORMAT,
    version: LEDGER_VERSION,
    engine: input.engine,
    spec: input.spec,
    seed: input.seed,
    specHash: sha256Hex(input.spec),
    parameterCount: input.parameterCount,
    branches,
    activeBranch: input.activeBranch,
    findings: encodeFindings(input.findings ?? []),
    savedAt: input.savedAt ?? new Date().toISOString(),
  };
  if (input.dataHash !== undefined) ledger.dataHash = input.dataHash;
  const checked = validateLedger(ledger);
  if (!checked.ok) throw new LedgerError('ledger', `the built ledger is invalid: ${checked.errors.join('; ')}`);
  return ledger;
}

/** The ledger as compact JSON text (what the notebook file will hold). */
export function serializeLedger(l: Ledger): string {
  return JSON.stringify(l);
}

/** Size of a ledger: UTF-8 bytes of its JSON, checkpoints (heads included) and step records. */
export function ledgerSize(l: Ledger): { bytes: number; checkpoints: number; records: number } {
  let checkpoints = 0;
  let records = 0;
  for (const b of l.branches) {
    checkpoints += b.checkpoints.length + 1;
    records += b.trajectory.count;
  }
  return { bytes: new TextEncoder().encode(serializeLedger(l)).length, checkpoints, records };
}

/** One branch decoded back into session data. */
export interface DecodedBranch {
  name: string;
  parent?: { branch: string; step: number };
  /** Flat spec keys changed against the parent (empty for the root). */
  patch: Record<string, unknown>;
  restart: boolean;
  /** Step records from step 0 (the parent's before this branch's first stored one) to the tip. */
  trajectory: StepRecord[];
  checkpoints: { step: number; fingerprint: string; state: SessionState }[];
  /** The tip. */
  head: { step: number; fingerprint: string; state: SessionState };
  /** The step the branch is shown at (the head's, unless the ledger keeps steps after it). */
  cursor: number;
  readouts: DecodedReadouts;
}

/** Options of {@link decodeBranches}. */
export interface DecodeOptions {
  /** Check the trajectory and readout digests (default true; a verification that reports edits reads on without). */
  verifyDigests?: boolean;
}

/**
 * Decodes every branch of a validated ledger, in ledger order (parents first).
 * @throws LedgerError when a field fails to decode.
 */
export function decodeBranches(l: Ledger, options: DecodeOptions = {}): DecodedBranch[] {
  const digests = options.verifyDigests !== false;
  const done = new Map<string, DecodedBranch>();
  const cp = (c: LedgerCheckpoint, field: string) => ({ step: c.step, fingerprint: c.fingerprint, state: decodeSessionState(c.state, `${field}.state`, l.parameterCount) });
  l.branches.forEach((b, i) => {
    const at = `branches[${i}]`;
    const own = decodeTrajectory(b.trajectory, `${at}.trajectory`, digests);
    let trajectory = own;
    if (b.parent) {
      const parent = done.get(b.parent.branch);
      if (parent === undefined) throw new LedgerError(`${at}.parent.branch`, `'${b.parent.branch}' must come before '${b.name}' in the ledger`);
      const first = own.length > 0 ? own[0].step : b.head.step;
      trajectory = [...parent.trajectory.filter((r) => r.step < first), ...own];
    }
    const out: DecodedBranch = {
      name: b.name,
      patch: b.patch ?? {},
      restart: b.restart === true,
      trajectory,
      checkpoints: b.checkpoints.map((c, k) => cp(c, `${at}.checkpoints[${k}]`)),
      head: cp(b.head, `${at}.head`),
      cursor: b.cursor ?? b.head.step,
      readouts: decodeReadouts(b.readouts, `${at}.readouts`, digests),
    };
    if (b.parent) out.parent = { ...b.parent };
    done.set(b.name, out);
  });
  return [...done.values()];
}

/**
 * Decodes the branch called `name` of a validated ledger (its ancestors are decoded too, for
 * the records it shares with them).
 * @throws LedgerError when there is no such branch or a field fails to decode.
 */
export function decodeBranch(l: Ledger, name: string): DecodedBranch {
  if (!l.branches.some((b) => b.name === name)) throw new LedgerError('branches', `no branch is named '${name}'`);
  return decodeBranches(l).find((b) => b.name === name) as DecodedBranch;
}
