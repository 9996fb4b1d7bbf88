/**
 * Opening a stored ledger: the whole value checked at once — schema, every decoded field,
 * fingerprints and digests ({@link validateLedger}), then each branch against the experiment its
 * spec and patches make ({@link coherenceProblems}) — so that a ledger the engine could not
 * continue is refused here, with every problem named by field, branch and step, and never at
 * the first Step or Rewind. Never throws on bad input; never changes its input.
 */
import type { Experiment } from '../core/setup';
import type { SpecPatch } from '../experiment/patch';
import { validateLedger } from './check';
import { coherenceProblems } from './coherence';
import { decodeBranches, type DecodedBranch } from './compose';
import { FORBIDDEN_KEYS } from './codec';
import { LedgerError, type Ledger } from './types';

/** One problem of a stored ledger, located. */
export interface LedgerProblem {
  /** Path of the field, like `branches[1].checkpoints[2].state.optimizer.kind`. */
  field: string;
  /** What is wrong with it. */
  detail: string;
  /** Name of the branch the field belongs to, when it belongs to one. */
  branch?: string;
  /** Step of the saved state the field belongs to, when it belongs to one. */
  step?: number;
  /** `field (branch 'x', step n): detail`. */
  message: string;
}

/** The experiment of a branch, or why it cannot be made. */
/**
 * The experiment of one branch. `withoutFiles`: built without the data or weights files its spec
 * names (a ledger opened for display), so what depends on their numbers is not checked here.
 */
export type BranchExperiment = { ok: true; experiment: Experiment; withoutFiles?: boolean } | { ok: false; message: string };

/** Makes the experiment of branch `name` from the ledger's spec and `chain` (root first; empty for the root). */
export type ExperimentMaker = (spec: string, chain: readonly SpecPatch[], name: string) => BranchExperiment;

/** Outcome of {@link openLedger}. */
export type OpenedLedger =
  | { ok: true; ledger: Ledger; branches: DecodedBranch[]; experiments: Experiment[] }
  | { ok: false; problems: LedgerProblem[]; specText?: string };

/** The typed error of an unreadable ledger: every problem, located; `message` lists the first few. */
export class LedgerOpenError extends Error {
  readonly problems: readonly LedgerProblem[];

  constructor(problems: readonly LedgerProblem[]) {
    super(summarizeProblems(problems));
    this.name = 'LedgerOpenError';
    this.problems = problems;
  }
}

/** The first `shown` problems' messages joined, with a count of the rest. */
export function summarizeProblems(problems: readonly LedgerProblem[], shown = 3): string {
  const head = problems.slice(0, shown).map((p) => p.message).join('; ');
  return problems.length > shown ? `${head} (and ${problems.length - shown} more)` : head;
}

const isObj = (v: unknown): v is Record<string, unknown> => typeof v === 'object' && v !== null && !Array.isArray(v);

/** Adds the branch name and the saved state's step to a field's problem, from the raw value. */
export function locate(raw: unknown, field: string, detail: string): LedgerProblem {
  const m = /^branches\[(\d+)\](?:\.(?:checkpoints\[(\d+)\]|(head)))?/.exec(field);
  const problem: LedgerProblem = { field, detail, message: '' };
  if (m !== null && isObj(raw) && Array.isArray(raw.branches)) {
    const b = raw.branches[Number(m[1])];
    if (isObj(b)) {
      if (typeof b.name === 'string') problem.branch = b.name;
      const saved = m[2] !== undefined ? (Array.isArray(b.checkpoints) ? b.checkpoints[Number(m[2])] : undefined) : m[3] !== undefined ? b.head : undefined;
      if (isObj(saved) && typeof saved.step === 'number' && Number.isInteger(saved.step)) problem.step = saved.step;
    }
  }
  const where = [problem.branch !== undefined ? `branch '${problem.branch.slice(0, 40)}'` : '', problem.step !== undefined ? `step ${problem.step}` : ''].filter((s) => s !== '');
  problem.message = `${field}${where.length > 0 ? ` (${where.join(', ')})` : ''}: ${detail}`;
  return problem;
}

/** Splits a validator message `"<field>: <detail>"`. */
function fromMessage(raw: unknown, message: string): LedgerProblem {
  const i = message.indexOf(': ');
  return i < 0 ? locate(raw, 'ledger', message) : locate(raw, message.slice(0, i), message.slice(i + 2));
}

/**
 * Finds a prototype key (`__proto__`, `constructor`, `prototype`) anywhere in a stored value, or
 * an object whose prototype is not a plain record's: what a `__proto__` key becomes when a JSON
 * value is copied by assignment (as JupyterLab's metadata copy does). No ledger field has such a
 * key, and one that vanished into a prototype is no longer covered by the fingerprints.
 *
 * @returns the field and what is wrong, or undefined.
 */
export function prototypeProblem(value: unknown, path = '', depth = 0): { field: string; detail: string } | undefined {
  if (typeof value !== 'object' || value === null || depth > 64) return undefined;
  // A plain record's prototype is some realm's Object.prototype (whose own prototype is null) or null.
  const proto = Object.getPrototypeOf(value) as object | null;
  if (!Array.isArray(value) && proto !== null && Object.getPrototypeOf(proto) !== null)
    return { field: path || 'ledger', detail: `has a '__proto__' key that was turned into a prototype; the ledger was edited` };
  for (const k of Object.keys(value)) {
    if (FORBIDDEN_KEYS.includes(k)) return { field: path || 'ledger', detail: `has a key named '${k}', a prototype key that no ledger field has; the ledger was edited` };
    const inner = prototypeProblem((value as Record<string, unknown>)[k], Array.isArray(value) ? `${path}[${k}]` : path === '' ? k : `${path}.${k}`, depth + 1);
    if (inner !== undefined) return inner;
  }
  return undefined;
}

/** Most problems reported for one ledger (the rest are counted in the message). */
export const MAX_LEDGER_PROBLEMS = 20;

/**
 * Opens a stored ledger (any readable version) for an engine to continue.
 *
 * @param value - the metadata value as read.
 * @param experimentOf - makes each branch's experiment (parse the spec, apply the patches).
 * @returns the ledger with its decoded branches and experiments, or every problem located.
 */
export function openLedger(value: unknown, experimentOf: ExperimentMaker): OpenedLedger {
  const specText = isObj(value) && typeof value.spec === 'string' ? value.spec : undefined;
  const fail = (problems: LedgerProblem[]): OpenedLedger => ({ ok: false, problems: problems.slice(0, MAX_LEDGER_PROBLEMS), specText });
  const proto = prototypeProblem(value);
  if (proto !== undefined) return fail([locate(value, proto.field, proto.detail)]);
  const checked = validateLedger(value);
  if (!checked.ok) return fail(checked.errors.map((m) => fromMessage(value, m)));
  const ledger = checked.ledger;
  let branches: DecodedBranch[];
  try {
    branches = decodeBranches(ledger);
  } catch (err) {
    const e = err instanceof LedgerError ? err : new LedgerError('ledger', String(err));
    return fail([locate(value, e.field, e.detail)]);
  }
  const chains = new Map<string, SpecPatch[]>();
  const experiments: Experiment[] = [];
  const partial: boolean[] = [];
  const problems: LedgerProblem[] = [];
  branches.forEach((b, i) => {
    const chain = b.parent ? [...(chains.get(b.parent.branch) ?? []), b.patch as SpecPatch] : [];
    chains.set(b.name, chain);
    const made = experimentOf(ledger.spec, chain, b.name);
    if (made.ok) {
      experiments.push(made.experiment);
      partial.push(made.withoutFiles === true);
    }
    else problems.push(locate(value, b.parent ? `branches[${i}].patch` : 'spec', b.parent ? `branch '${b.name}' no longer validates against the spec: ${made.message}` : `the saved spec no longer parses: ${made.message}`));
  });
  if (problems.length > 0) return fail(problems);
  let found: LedgerError[];
  try {
    found = coherenceProblems(ledger, branches, experiments, partial);
  } catch (err) {
    found = [new LedgerError('ledger', `cannot be checked against its spec: ${err instanceof Error ? err.message : String(err)}`)];
  }
  if (found.length > 0) return fail(found.map((e) => locate(value, e.field, e.detail)));
  return { ok: true, ledger, branches, experiments };
}
