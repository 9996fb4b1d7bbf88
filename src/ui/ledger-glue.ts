/**
 * The one adapter between the cell controller and the ledger layer (`src/ledger/`): maps
 * the controller's {@link LedgerContent} (one trajectory, its checkpoints, the head) onto
 * the ledger's `main` branch and back. Validation and encoding are the ledger layer's.
 */
import { buildLedger, decodeBranch, ledgerSize, recoverSpec, validateLedger, LEDGER_KEY as KEY } from '../ledger';
import type { SessionState } from '../core/state';
import { parseSpec } from '../spec';
import { describeRecipe, describeSetup } from '../worker/describe';
import type { CheckpointData } from '../worker/protocol';
import type { LedgerContent, LedgerGlue, LedgerRead } from './ports';

/** Our metadata key on a stepwell cell. */
export const LEDGER_KEY = KEY;

/** Engine name written into each ledger. */
export const ENGINE_NAME = 'stepwell 0.1.0';

/** Name of the one branch this version of the cell writes. */
const MAIN = 'main';

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

function build(content: LedgerContent, cap: number): { value: object; bytes: number } {
  const parsed = parseSpec(content.specText);
  if (!parsed.ok) throw new Error(`the session's spec does not parse: ${parsed.errors[0].message}`);
  const head = content.state;
  const byStep = new Map<number, SessionState>();
  for (const c of content.checkpoints) if (c.step < head.step) byStep.set(c.step, c.state);
  const ledger = buildLedger({
    engine: ENGINE_NAME,
    spec: content.specText,
    seed: parsed.experiment.seed,
    parameterCount: content.summary.parameterCount,
    branches: [{ name: MAIN, trajectory: content.trajectory, checkpoints: [...byStep.values()], head }],
    activeBranch: MAIN,
    limits: { maxCheckpoints: Math.max(2, cap) }
  });
  return { value: ledger, bytes: ledgerSize(ledger).bytes };
}

/** The ledger glue the plugin uses. */
export const ledgerGlue: LedgerGlue = { read, build };
