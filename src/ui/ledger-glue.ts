/**
 * The one adapter between the cell controller and the ledger layer (`src/ledger/`) on the
 * page: validates a metadata value and decodes its active branch into the controller's
 * {@link LedgerContent}. (Ledgers are written by the worker: `worker/ledger-build.ts`.)
 */
import { decodeBranch, recoverSpec, validateLedger, LEDGER_KEY as KEY } from '../ledger';
import { parseSpec } from '../experiment';
import { describeRecipe, describeSetup } from '../worker/describe';
import type { CheckpointData } from '../worker/protocol';
import type { LedgerContent, LedgerGlue, LedgerRead } from './ports';

/** Our metadata key on a stepwell cell. */
export const LEDGER_KEY = KEY;


function read(value: unknown): LedgerRead {
  if (value === undefined || value === null) return { kind: 'absent' };
  const checked = validateLedger(value);
  if (!checked.ok) {
    const shown = checked.errors.slice(0, 3).join('; ') + (checked.errors.length > 3 ? ` (and ${checked.errors.length - 3} more)` : '');
    return { kind: 'corrupt', message: shown, specText: recoverSpec(value) };
  }
  const ledger = checked.ledger;
  try {
    const branch = decodeBranch(ledger, ledger.activeBranch);
    const parsed = parseSpec(ledger.spec);
    if (!parsed.ok) {
      return {
        kind: 'corrupt',
        message: `the saved spec no longer parses (${parsed.errors[0].message})`,
        specText: ledger.spec
      };
    }
    const checkpoints: CheckpointData[] = [...branch.checkpoints, branch.head];
    const content: LedgerContent = {
      specText: ledger.spec,
      summary: {
        step: branch.head.step,
        fingerprint: branch.head.fingerprint,
        parameterCount: ledger.parameterCount,
        checkpointSteps: checkpoints.map(c => c.step),
        recipe: describeRecipe(parsed.experiment.recipe),
        setup: describeSetup(parsed.experiment.setup)
      },
      state: branch.head.state,
      trajectory: branch.trajectory,
      checkpoints
    };
    return { kind: 'ok', content };
  } catch (error) {
    return { kind: 'corrupt', message: (error as Error).message, specText: ledger.spec };
  }
}

/** The ledger glue the plugin uses. */
export const ledgerGlue: LedgerGlue = { read };
