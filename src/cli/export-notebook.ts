/**
 * A notebook cell as the source of `stepwell export NOTEBOOK --cell N [--branch NAME]`: the
 * branch's experiment (the ledger's spec with its lineage's patches, files read relative to the
 * notebook), its stored step records, and its stored states. Exports from a notebook write what
 * the ledger recorded — the trajectory's stored records, the weights of the tip (or of the step
 * `--steps` names, rebuilt from the nearest stored checkpoint) — so they are the numbers a
 * colleague verified, not a new run.
 */
import type { SessionState, StepRecord } from '../core/state';
import { formatSpecError } from '../experiment';
import { patchChainExperiment } from '../experiment/patch';
import { groveFromLedger, sha256Hex, validateLedger, type RestoredGrove } from '../ledger';
import { ledgerChains, readCellFiles } from './cell-files';
import { CliError } from './io';
import { cellLabel, readNotebook, selectCells } from './notebook';
import type { Experiment } from '../core/setup';

/** One branch of a notebook cell, ready to export. */
export interface NotebookBranch {
  experiment: Experiment;
  /** `NOTEBOOK cell N branch B`, for headers and metadata. */
  label: string;
  /** The notebook's path (data paths of an exported script are relative to its folder). */
  notebookPath: string;
  branch: string;
  /** Steps of every fork in the branch's lineage (a script can only start at step 0). */
  forkSteps: number[];
  /** The stored records from step 0 to the tip (the parent's before the fork). */
  records: StepRecord[];
  tip: number;
  /** The stored state at `step` (the tip by default), rebuilt from the nearest checkpoint when not stored. */
  stateAt(step: number): SessionState;
  warnings: string[];
}

/**
 * Reads the branch `branch` (default: the ledger's active branch) of the cell `--cell N` (may
 * be left out when only one cell has a ledger).
 *
 * @throws CliError naming the notebook, the cell and the branch when any of them is not there or cannot be read.
 */
export function notebookBranch(path: string, cellFlag: string | undefined, branchFlag: string | undefined): NotebookBranch {
  const nb = readNotebook(path);
  const cells = selectCells(nb, cellFlag);
  if (cells.length > 1) throw new CliError(`${path}: ${cells.length} cells have a ledger (${cells.map((c) => c.index).join(', ')}): choose one with --cell N`);
  const cell = cells[0];
  const where = `${path}: ${cellLabel(cell)}`;
  const checked = validateLedger(cell.ledger);
  if (!checked.ok) throw new CliError(`${where}: the ledger cannot be read: ${checked.errors.slice(0, 3).join('; ')}`);
  const ledger = checked.ledger;
  const name = branchFlag ?? ledger.activeBranch;
  if (!ledger.branches.some((b) => b.name === name)) throw new CliError(`${where}: no branch is named '${name}' (branches: ${ledger.branches.map((b) => b.name).join(', ')})`);
  const warnings: string[] = [];
  if (sha256Hex(cell.source) !== ledger.specHash) warnings.push(`${where}: the cell's spec text changed since the ledger was written; the export follows the ledger's spec (run stepwell verify)`);
  const files = readCellFiles(path, where, ledger.spec, ledgerChains(ledger));
  let restored: RestoredGrove;
  try {
    restored = groveFromLedger(ledger, (b, chain) => {
      const parsed = patchChainExperiment(ledger.spec, chain, { files: files.files });
      if (!parsed.ok) throw new Error(`branch '${b.name}': ${parsed.errors.map(formatSpecError).join('; ')}`);
      return parsed.experiment;
    }, 10);
  } catch (e) {
    throw new CliError([...files.problems, `${where}: the branches cannot be rebuilt: ${(e as Error).message}`].join('\n'));
  }
  const grove = restored.grove;
  const decoded = restored.branches.find((b) => b.name === name);
  if (decoded === undefined) throw new CliError(`${where}: no branch is named '${name}'`);
  const forkSteps: number[] = [];
  for (let o = grove.origin(name); o !== null; o = grove.origin(o.parent)) forkSteps.push(o.step);
  const tip = grove.tip(name);
  const origin = grove.experiment(grove.root()).setup.data?.origin;
  if ((ledger.dataHash ?? null) !== (origin?.hash ?? null)) warnings.push(`${where}: the data changed since the ledger was written (data hash ${ledger.dataHash ?? 'none'} in the ledger, ${origin?.hash ?? 'none'} now): run stepwell verify`);
  return {
    experiment: grove.experiment(name),
    label: `${path} cell ${cell.index} branch ${name}`,
    notebookPath: path,
    branch: name,
    forkSteps,
    records: decoded.trajectory,
    tip,
    stateAt: (step) => {
      if (step === tip) return grove.tipState(name);
      try {
        return grove.stateAt(name, step);
      } catch (e) {
        throw new CliError(`${where}: --steps ${step}: ${(e as Error).message}`);
      }
    },
    warnings
  };
}
