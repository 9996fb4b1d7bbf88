/**
 * The ledger's one door in: migrate to the current version, validate against
 * `ledger.schema.json`, then check what a schema cannot (base64 decodes to the right
 * lengths, steps increase, fingerprints match their states, branch names resolve).
 * Every problem is reported as `"<field>: <detail>"`.
 */
import type { ErrorObject, ValidateFunction } from 'ajv';
import validateLedgerSchema from './ledger-validator.generated';
import { fingerprintState } from '../core/session/state-data';
import { decodeSessionState, decodeTrajectory } from './codec';
import { migrateLedger } from './migrate';
import { decodeFindings, decodeReadouts } from './readouts';
import { patchPath } from '../experiment/patch';
import { sha256Hex } from './hash';
import { LedgerError } from './types';
import type { Ledger, LedgerCheckpoint } from './types';

/** Outcome of {@link validateLedger}. */
export type LedgerResult = { ok: true; ledger: Ledger } | { ok: false; errors: string[] };

/** Options of {@link validateLedger}. */
export interface ValidateOptions {
  /** Recompute each checkpoint's fingerprint from its decoded state (default true). */
  verifyFingerprints?: boolean;
  /** Check the trajectory and readout digests (default true). */
  verifyDigests?: boolean;
  /** Check `specHash` against `spec` (default true). */
  verifySpecHash?: boolean;
}

/** Which integrity checks {@link semanticProblems} makes. */
interface Checks {
  fingerprints: boolean;
  digests: boolean;
  specHash: boolean;
}

/** The schema validator, precompiled from `ledger.schema.json` (`src/validators/generate.mjs`): no code generated at run time. */
function validator(): ValidateFunction {
  return validateLedgerSchema as unknown as ValidateFunction;
}

/** Turns a JSON pointer into `branches[0].head.state`; the root is `ledger`. */
function fieldOf(pointer: string): string {
  if (pointer === '') return 'ledger';
  let out = '';
  for (const raw of pointer.slice(1).split('/')) {
    const seg = raw.replace(/~1/g, '/').replace(/~0/g, '~');
    out += /^\d+$/.test(seg) ? `[${seg}]` : out === '' ? seg : `.${seg}`;
  }
  return out;
}

function schemaMessage(e: ErrorObject): string | undefined {
  const field = fieldOf(e.instancePath);
  const got = JSON.stringify(e.data)?.slice(0, 40) ?? 'nothing';
  switch (e.keyword) {
    case 'required':
      return `${field}: missing required field '${(e.params as { missingProperty: string }).missingProperty}'`;
    case 'additionalProperties':
      return `${field}: unknown field '${(e.params as { additionalProperty: string }).additionalProperty}'`;
    case 'pattern':
      return (e.schema as string).includes('{64}')
        ? `${field}: expected 64 lowercase hex digits (SHA-256), got ${got}`
        : `${field}: expected a number or "f64:" + 16 hex digits, got ${got}`;
    case 'anyOf':
      return `${field}: has the wrong type, got ${got}`;
    default:
      return `${field}: ${e.message ?? 'is invalid'}${e.keyword === 'type' || e.keyword === 'enum' || e.keyword === 'minimum' ? `, got ${got}` : ''}`;
  }
}

function checkpointProblems(c: LedgerCheckpoint, field: string, parameterCount: number, verify: boolean, errors: string[]): void {
  try {
    const state = decodeSessionState(c.state, `${field}.state`, parameterCount);
    if (state.step !== c.step) errors.push(`${field}.step: is ${c.step}, but ${field}.state.step is ${state.step}`);
    if (verify && fingerprintState(state) !== c.fingerprint)
      errors.push(`${field}.fingerprint: does not match the state it describes (the state was edited or damaged)`);
  } catch (err) {
    errors.push(err instanceof LedgerError ? err.message : `${field}: ${String(err)}`);
  }
}

/** Checks of one valid-by-schema ledger that the schema cannot express. */
function semanticProblems(l: Ledger, checks: Checks): string[] {
  const errors: string[] = [];
  const verify = checks.fingerprints;
  if (checks.specHash && sha256Hex(l.spec) !== l.specHash) errors.push('specHash: does not match the SHA-256 of spec (the spec text was changed after it was hashed)');
  const names = new Map<string, number>();
  l.branches.forEach((b, i) => {
    const prev = names.get(b.name);
    if (prev !== undefined) errors.push(`branches[${i}].name: '${b.name}' is already the name of branches[${prev}]`);
    else names.set(b.name, i);
  });
  if (!names.has(l.activeBranch)) errors.push(`activeBranch: no branch is named '${l.activeBranch}' (branches: ${Array.from(names.keys()).join(', ')})`);
  if (!l.branches.some((b) => b.parent === undefined)) errors.push('branches: no branch is a root (every branch has a parent)');
  l.branches.forEach((b, i) => {
    const at = `branches[${i}]`;
    if (b.parent) {
      const p = names.get(b.parent.branch);
      if (p === undefined) errors.push(`${at}.parent.branch: no branch is named '${b.parent.branch}'`);
      else if (p === i) errors.push(`${at}.parent.branch: a branch cannot be its own parent`);
      else if (b.parent.step > l.branches[p].head.step)
        errors.push(`${at}.parent.step: is ${b.parent.step}, beyond the head (step ${l.branches[p].head.step}) of branch '${b.parent.branch}'`);
      // Walk up the parents; a cycle never reaches a root.
      if (p !== undefined && p !== i) {
        const seen = new Set<number>([i]);
        let cur: number | undefined = p;
        while (cur !== undefined) {
          if (seen.has(cur)) {
            errors.push(`${at}.parent: the parent chain loops back to branch '${l.branches[cur].name}'`);
            break;
          }
          seen.add(cur);
          const up: { branch: string } | undefined = l.branches[cur].parent;
          cur = up ? names.get(up.branch) : undefined;
        }
      }
    }
    let last = -1;
    b.checkpoints.forEach((c, k) => {
      const field = `${at}.checkpoints[${k}]`;
      if (c.step <= last) errors.push(`${field}.step: steps must increase, got ${c.step} after ${last}`);
      if (c.step >= b.head.step) errors.push(`${field}.step: is ${c.step}, not before the head (step ${b.head.step})`);
      last = c.step;
      checkpointProblems(c, field, l.parameterCount, verify, errors);
    });
    checkpointProblems(b.head, `${at}.head`, l.parameterCount, verify, errors);
    if (b.parent && b.head.step < b.parent.step) errors.push(`${at}.head.step: is ${b.head.step}, before the fork step ${b.parent.step}`);
    if (b.restart && !b.parent) errors.push(`${at}.restart: only a forked branch can restart`);
    if (b.restart && b.parent && b.parent.step !== 0) errors.push(`${at}.restart: a branch that restarts forks at step 0, not step ${b.parent.step}`);
    if (b.patch && !b.parent) errors.push(`${at}.patch: the root branch runs the spec as written and has no patch`);
    for (const key of Object.keys(b.patch ?? {})) {
      const p = patchPath(key);
      if (!p.ok) errors.push(`${at}.patch: ${p.message}`);
    }
    if (b.cursor !== undefined) {
      if (b.cursor >= b.head.step) errors.push(`${at}.cursor: is ${b.cursor}, not before the head (step ${b.head.step}); leave it out when the branch is at its head`);
      else if (!b.checkpoints.some((c) => c.step === b.cursor)) errors.push(`${at}.cursor: no checkpoint is stored at step ${b.cursor}`);
      if (b.parent && b.cursor < b.parent.step) errors.push(`${at}.cursor: is ${b.cursor}, before the fork step ${b.parent.step}`);
    }
    try {
      const records = decodeTrajectory(b.trajectory, `${at}.trajectory`, checks.digests);
      const lastRec = records[records.length - 1];
      if (lastRec && lastRec.step > b.head.step)
        errors.push(`${at}.trajectory.step: the last record is step ${lastRec.step}, beyond the head (step ${b.head.step})`);
      if (b.parent && records.length > 0 && records[0].step > b.parent.step)
        errors.push(`${at}.trajectory.step: the first record is step ${records[0].step}, after the fork step ${b.parent.step} (a forked branch keeps its records from its fork step on)`);
    } catch (err) {
      errors.push(err instanceof LedgerError ? err.message : `${at}.trajectory: ${String(err)}`);
    }
    try {
      decodeReadouts(b.readouts, `${at}.readouts`, checks.digests);
    } catch (err) {
      errors.push(err instanceof LedgerError ? err.message : `${at}.readouts: ${String(err)}`);
    }
  });
  try {
    decodeFindings(l.findings);
  } catch (err) {
    errors.push(err instanceof LedgerError ? err.message : `findings: ${String(err)}`);
  }
  l.findings.forEach((f, i) => {
    if (!names.has(f.branch as string)) errors.push(`findings[${i}].branch: '${String(f.branch)}' is not the name of a branch`);
  });
  return errors;
}

/**
 * Validates a stored ledger (any readable version; older ones are migrated first).
 * @returns the ledger at the current version, or every problem found, each naming its field.
 * Never throws on bad input.
 */
export function validateLedger(value: unknown, options: ValidateOptions = {}): LedgerResult {
  const migrated = migrateLedger(value);
  if (!migrated.ok) return migrated;
  const validate = validator();
  if (!validate(migrated.value)) {
    const errors = (validate.errors ?? []).map(schemaMessage).filter((m): m is string => m !== undefined);
    return { ok: false, errors: Array.from(new Set(errors)) };
  }
  const ledger = migrated.value as unknown as Ledger;
  const errors = semanticProblems(ledger, { fingerprints: options.verifyFingerprints !== false, digests: options.verifyDigests !== false, specHash: options.verifySpecHash !== false });
  return errors.length > 0 ? { ok: false, errors } : { ok: true, ledger };
}
