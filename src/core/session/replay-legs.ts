/**
 * The legs of a replay from spec and seed (see `Grove.replay`): a root branch is re-run from
 * a fresh session (as is a branch that restarted with its own setup or seed); a forked branch
 * first replays its ancestors up to each fork point, then carries the replayed state over to its
 * recipe ({@link adaptSessionState}) and re-runs to
 * the target, noting every record and, at the branch's checkpoint steps, the fingerprint and
 * parameters.
 */
import type { Experiment } from '../setup';
import type { SessionState } from '../state';
import { adaptSessionState } from './adapt';
import type { ReplayedStep } from './replay';
import type { Session } from './live';
import type { Leg } from './task';

/** One branch of the chain being replayed, root first. */
export interface ReplayLink {
  experiment: Experiment;
  /** Step at which this branch was forked from the previous link (null for the root). */
  forkStep: number | null;
  /** True when the branch starts afresh from its own seed and setup instead of the parent's state. */
  restart: boolean;
}

/** Legs and outputs of a replay. */
export interface ReplayPlan {
  legs: Leg[];
  /** Every replayed step, in order (a later entry for the same step wins). */
  steps: ReplayedStep[];
  /** The replayed session at the target (available once the last leg closed). */
  final(): Session;
}

/**
 * Plans the replay of `chain` (root first, the replayed branch last) up to `target`.
 *
 * @param checkpointSteps - the replayed branch's checkpoint steps (fingerprints noted there).
 * @param recordSteps - the steps whose records will be compared (only these, the checkpoint
 *   steps and step 0 are noted, so a replay of millions of updates holds little).
 * @param newSession - makes a session for an experiment, fresh (null) or from a state.
 */
export function planReplay(
  chain: readonly ReplayLink[],
  target: number,
  checkpointSteps: ReadonlySet<number>,
  recordSteps: ReadonlySet<number>,
  newSession: (experiment: Experiment, state: SessionState | null) => Session
): ReplayPlan {
  const steps: ReplayedStep[] = [];
  let prev: Session | null = null;
  let final: Session | null = null;
  const legs: Leg[] = chain.map((link, k) => {
    const last = k === chain.length - 1;
    const from = link.forkStep ?? 0;
    const to = last ? target : (chain[k + 1].forkStep as number);
    const note = (s: Session, record: ReplayedStep['record']): void => {
      const at = last && checkpointSteps.has(s.stepCount);
      if (!at && !recordSteps.has(s.stepCount) && s.stepCount !== 0) return;
      steps.push({ step: s.stepCount, record, fingerprint: at ? s.fingerprint() : null, params: at ? Float64Array.from(s.parameters) : null });
    };
    return {
      from,
      to,
      open: (): Session => {
        if (link.forkStep === null || link.restart) {
          const s = newSession(link.experiment, null);
          note(s, s.initialRecord());
          return s;
        }
        const parent = prev as Session;
        const s = newSession(link.experiment, adaptSessionState(parent.state(), link.experiment.recipe, parent.objective));
        // The record at the fork step is the parent's update into it; the state is the fork state.
        const before = steps.length > 0 && steps[steps.length - 1].step === from ? steps[steps.length - 1].record : null;
        note(s, before);
        return s;
      },
      each: note,
      close: (s) => {
        prev = s;
        if (last) final = s;
      }
    };
  });
  return {
    legs,
    steps,
    final: () => {
      if (final === null) throw new Error('the replay has not reached its target yet');
      return final;
    }
  };
}
