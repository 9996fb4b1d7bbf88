/**
 * A stored ledger back into core's {@link Grove}: every branch continuing bit for bit from its
 * head (and at its cursor), with its saved checkpoints, so rewind, stepping on and replay work
 * as in the session that wrote it. The one path from a ledger to a grove, shared by the cell's
 * worker and `stepwell verify` / `report` / `export` on a notebook.
 */
import type { Experiment } from '../core/setup';
import type { SessionState } from '../core/state';
import { Grove, type BranchSnapshot, type GroveOptions } from '../core/session';
import type { SpecPatch } from '../experiment/patch';
import { decodeBranches, type DecodedBranch, type DecodeOptions } from './compose';
import type { Ledger } from './types';

/**
 * The experiment of a branch: the spec with `chain` (its ancestry's patches, root first, its own
 * last; empty for the root) applied. Throws with a message naming the branch when it no longer
 * validates.
 */
export type ExperimentOf = (branch: DecodedBranch, chain: readonly SpecPatch[]) => Experiment;

/** A grove rebuilt from a ledger, with the decoded branches it came from (ledger order). */
export interface RestoredGrove {
  grove: Grove;
  branches: DecodedBranch[];
  /** Each branch's patch chain, root first. */
  chains: Map<string, SpecPatch[]>;
}

/**
 * Rebuilds the grove of a validated ledger. `checkpointEvery` is the spacing of the automatic
 * checkpoints for steps taken from now on (a stored ledger does not record it).
 *
 * @throws LedgerError when a field fails to decode; whatever `experimentOf` throws.
 */
export function groveFromLedger(ledger: Ledger, experimentOf: ExperimentOf, checkpointEvery: number, options: GroveOptions = {}, decode: DecodeOptions = {}): RestoredGrove {
  const branches = decodeBranches(ledger, decode);
  const chains = new Map<string, SpecPatch[]>();
  const snapshots = branches.map((b) => {
    const chain = b.parent ? [...(chains.get(b.parent.branch) ?? []), b.patch as SpecPatch] : [];
    chains.set(b.name, chain);
    return branchSnapshot(b, experimentOf(b, chain), checkpointEvery);
  });
  return { grove: Grove.restore({ branches: snapshots }, { ...options, checkpointEvery }), branches, chains };
}

/**
 * Rebuilds the grove of a ledger {@link openLedger} accepted, from the branches and experiments
 * it already decoded and checked (nothing is decoded twice).
 */
export function groveFromOpened(opened: { branches: DecodedBranch[]; experiments: Experiment[] }, checkpointEvery: number, options: GroveOptions = {}): RestoredGrove {
  const chains = new Map<string, SpecPatch[]>();
  const snapshots = opened.branches.map((b, i) => {
    chains.set(b.name, b.parent ? [...(chains.get(b.parent.branch) ?? []), b.patch as SpecPatch] : []);
    return branchSnapshot(b, opened.experiments[i], checkpointEvery);
  });
  return { grove: Grove.restore({ branches: snapshots }, { ...options, checkpointEvery }), branches: opened.branches, chains };
}

/** A grove snapshot of one decoded ledger branch (cursor from its checkpoint; the head as the tip). */
export function branchSnapshot(b: DecodedBranch, experiment: Experiment, checkpointEvery: number): BranchSnapshot {
  const saved = [...b.checkpoints, b.head];
  const atCursor = saved.find((c) => c.step === b.cursor);
  if (atCursor === undefined) throw new Error(`branch '${b.name}' has no saved state at its cursor (step ${b.cursor})`);
  const current: SessionState = atCursor.state;
  return {
    name: b.name,
    experiment,
    origin: b.parent ? { parent: b.parent.branch, step: b.parent.step, patch: b.patch, restart: b.restart } : null,
    trajectory: b.trajectory,
    checkpoints: saved.map((c) => ({ step: c.step, fingerprint: c.fingerprint, state: c.state, manual: false })),
    every: checkpointEvery,
    current,
    tip: b.cursor < b.head.step ? b.head.state : null
  };
}
