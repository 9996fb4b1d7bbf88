/** `stepwell run SPEC --steps N`: a trajectory from spec + seed. */
import { Session, type StopCondition } from '../core/session';
import { CliError, loadExperiment, positiveInt } from './io';

/** Flags of `run`. */
export interface RunFlags {
  json?: boolean;
  steps?: string;
  until?: string;
  set?: string[];
}

/** Parses `loss<V`, `grad<V` or `diverged` into a stop condition. */
export function parseUntil(text: string): StopCondition {
  if (text === 'diverged') return { kind: 'diverged' };
  const m = /^(loss|grad)\s*<\s*(\S+)$/.exec(text);
  const v = m ? Number(m[2]) : NaN;
  if (!m || !Number.isFinite(v)) throw new CliError(`--until must be loss<VALUE, grad<VALUE or diverged, got '${text}'`);
  return m[1] === 'loss' ? { kind: 'loss-below', value: v } : { kind: 'grad-norm-below', value: v };
}

/** Runs the command and returns its output text. */
export function runCommand(path: string, flags: RunFlags): string {
  if (flags.steps === undefined) throw new CliError('run needs --steps N (the number of optimizer updates, or the cap with --until)');
  const steps = positiveInt(flags.steps, '--steps', 0);
  const { experiment } = loadExperiment(path, flags.set);
  const session = Session.create(experiment);
  const records = [session.initialRecord()];
  let reason: string = 'steps';
  if (flags.until !== undefined) {
    const r = session.runUntil(parseUntil(flags.until), steps);
    records.push(...r.records);
    reason = r.reason;
  } else {
    records.push(...session.step(steps));
  }
  const final = { step: session.stepCount, loss: session.fullLoss(), fingerprint: session.fingerprint(), parameters: Array.from(session.parameters) };
  if (flags.json) {
    const trajectory = records.map((r) => ({ step: r.step, loss: r.loss, gradNorm: r.gradNorm, updateNorm: r.updateNorm, lr: r.lr }));
    return JSON.stringify({ trajectory, stopped: reason, final }) + '\n';
  }
  const every = Math.max(1, Math.ceil(records.length / 20));
  const lines = records.filter((r, i) => i % every === 0 || i === records.length - 1)
    .map((r) => `${String(r.step).padStart(6)}  ${r.loss.toPrecision(8).padStart(14)}  ${Number.isFinite(r.gradNorm) ? r.gradNorm.toExponential(3) : '-'}`);
  return [
    `${experiment.recipe.optimizer}, lr ${experiment.recipe.lr}, batch ${experiment.recipe.batch}, seed ${experiment.seed}, ${session.objective.parameterCount} parameters`,
    '  step            loss   |grad|',
    ...lines,
    `stopped: ${reason} after ${session.stepCount} steps; final loss ${final.loss.toPrecision(8)}`,
    `fingerprint ${final.fingerprint}`,
    '',
  ].join('\n');
}
