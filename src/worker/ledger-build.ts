/**
 * Builds a cell's ledger from the live session inside the worker, so the page receives one
 * finished, validated JSON value (a few long base64 strings) instead of every state and
 * record. The session's one trajectory becomes the ledger's `main` branch.
 */
import { buildLedger, ledgerSize } from '../ledger';
import type { SessionState, StepRecord } from '../core/state';
import type { Experiment } from '../core/setup';
import type { CheckpointData } from './protocol';

/** Engine name written into each ledger. */
export const ENGINE_NAME = 'stepwell 0.1.0';

/** Name of the one branch this version of the cell writes. */
export const MAIN_BRANCH = 'main';

/** Inputs of {@link buildCellLedger}. */
export interface CellLedgerInput {
  specText: string;
  experiment: Experiment;
  parameterCount: number;
  head: SessionState;
  trajectory: readonly StepRecord[];
  checkpoints: readonly CheckpointData[];
  /** Most checkpoints kept, head included (at least 2). */
  checkpointCap: number;
}

/**
 * Builds and validates the whole ledger value.
 *
 * @throws LedgerError naming the field when it cannot be built; nothing half-built escapes.
 */
export function buildCellLedger(input: CellLedgerInput): { value: object; bytes: number } {
  const byStep = new Map<number, SessionState>();
  for (const c of input.checkpoints) if (c.step < input.head.step) byStep.set(c.step, c.state);
  const ledger = buildLedger({
    engine: ENGINE_NAME,
    spec: input.specText,
    seed: input.experiment.seed,
    parameterCount: input.parameterCount,
    branches: [{ name: MAIN_BRANCH, trajectory: input.trajectory, checkpoints: [...byStep.values()], head: input.head }],
    activeBranch: MAIN_BRANCH,
    limits: { maxCheckpoints: Math.max(2, input.checkpointCap) },
    // the hash of the numbers read from data files (absent for inline data)
    ...(input.experiment.setup.data?.origin ? { dataHash: input.experiment.setup.data.origin.hash } : {})
  });
  return { value: ledger, bytes: ledgerSize(ledger).bytes };
}
