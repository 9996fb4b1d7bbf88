/** `stepwell run SPEC --steps N`: a trajectory from spec + seed, optionally with a branch. */
import { Grove, type StopCondition } from '../core/session';
import type { Experiment } from '../core/setup';
import type { StepRecord } from '../core/state';
import { trailingStall } from '../core/probe/stall';
import { describePatch, patchExperiment, splitAssignments, touchesSetup } from '../experiment/patch';
import { CliError, loadExperiment, positiveInt, readOverrides, readSpecFiles, toJson, type CommandResult } from './io';

/** Flags of `run`. */
export interface RunFlags {
  /** `NAME=VALUE` size limits over the defaults (`experiment/limits.ts`). */
  limit?: string[];
  json?: boolean;
  steps?: string;
  until?: string;
  set?: string[];
  branch?: string;
  replay?: boolean;
}

/**
 * Most updates one `run` may ask for: the trajectory of every step is printed, so this bounds
 * the output (about 100 bytes a step) before any work starts.
 */
export const MAX_STEPS = 1_000_000;

/** Parses `loss<V`, `grad<V` or `diverged` into a stop condition. */
export function parseUntil(text: string): StopCondition {
  if (text === 'diverged') return { kind: 'diverged' };
  const m = /^(loss|grad)\s*<\s*(\S+)$/.exec(text);
  const v = m ? Number(m[2]) : NaN;
  if (!m || !Number.isFinite(v)) throw new CliError(`--until must be loss<VALUE, grad<VALUE or diverged, got '${text}'`);
  return m[1] === 'loss' ? { kind: 'loss-below', value: v } : { kind: 'grad-norm-below', value: v };
}

/** Parses `STEP:KEY=VALUE[,KEY=VALUE…]` into the fork step and the overrides (keys as `--set` takes them). */
export function parseBranch(text: string): { at: number; overrides: string[] } {
  const colon = text.indexOf(':');
  const stepText = colon < 0 ? '' : text.slice(0, colon);
  const at = /^\d+$/.test(stepText) ? Number(stepText) : NaN;
  const overrides = colon < 0 ? [] : splitAssignments(text.slice(colon + 1));
  if (!Number.isSafeInteger(at) || overrides.length === 0) {
    throw new CliError(`--branch must be STEP:KEY=VALUE[,KEY=VALUE...] (e.g. 40:lr=0.02), got '${text}'`);
  }
  return { at, overrides };
}

interface Leg {
  records: StepRecord[];
  stopped: string;
  /** Step whose update made the loss or the weights non-finite (the branch was moved back one step). */
  divergedAt?: number;
}

/**
 * Advances one branch by `steps` updates or until the condition holds. Every run stops at the
 * first non-finite loss or weight; the branch is then moved back to the last finite state, so
 * the final state reported is one that can be continued, while the trajectory keeps the record
 * that showed the divergence.
 */
function advance(grove: Grove, name: string, steps: number, until: StopCondition | undefined): Leg {
  const r = grove.runUntil(name, until ?? { kind: 'steps', count: steps }, steps);
  const stopped = until === undefined && (r.reason === 'condition' || r.reason === 'max-steps') ? 'steps' : r.reason;
  const last = r.records[r.records.length - 1];
  const session = grove.session(name);
  if (r.reason === 'diverged' && last !== undefined && (!Number.isFinite(last.loss) || !session.parameters.every(Number.isFinite))) {
    grove.rewind(name, last.step - 1);
    return { records: r.records, stopped, divergedAt: last.step };
  }
  return { records: r.records, stopped };
}

function compact(records: StepRecord[]): { step: number; loss: number; gradNorm: number; updateNorm: number; lr: number }[] {
  return records.map((r) => ({ step: r.step, loss: r.loss, gradNorm: r.gradNorm, updateNorm: r.updateNorm, lr: r.lr }));
}

/**
 * Runs the command. Exit code 0 when the run ended as asked, 3 when the loss or the weights became
 * non-finite (unless `--until diverged` asked for exactly that); the final state is then the last
 * finite one.
 */
export function runCommand(path: string, flags: RunFlags): CommandResult {
  if (flags.steps === undefined) throw new CliError('run needs --steps N (the number of optimizer updates, or the cap with --until)');
  const steps = positiveInt(flags.steps, '--steps', 0, MAX_STEPS);
  const { experiment, text, patch, limits, warnings } = loadExperiment(path, flags.set, flags.limit);
  const until = flags.until === undefined ? undefined : parseUntil(flags.until);
  const fork = flags.branch === undefined ? undefined : parseBranch(flags.branch);
  if (fork && fork.at > steps) throw new CliError(`--branch forks at step ${fork.at}, after the last step ${steps}`);
  // The branch's experiment goes through the same validation as the spec itself.
  const branchPatch = fork ? readOverrides(fork.overrides, '--branch') : undefined;
  let patched: Experiment | undefined;
  if (branchPatch) {
    const r = patchExperiment(text, { ...patch, ...branchPatch }, { files: readSpecFiles(path, text, { ...patch, ...branchPatch }, limits.maxFileBytes), limits });
    if (!r.ok) throw new CliError(r.errors.map((e) => `${path}: --branch: ${e.message}`).join('\n'));
    patched = r.experiment;
  }

  const grove = Grove.create(experiment);
  const start = grove.trajectory('main')[0];
  if (!Number.isFinite(start.loss)) {
    throw new CliError(`${path}: the loss is already ${start.loss} at step 0, before any update: check model.gain, model.init, explicit weights and the data`);
  }
  const first = advance(grove, 'main', steps, until);
  // concat, not push(...records): a spread of 150 000 records overflows the call stack
  const main: Leg = { ...first, records: [start].concat(first.records) };
  let branch: (Leg & { name: string; at: number }) | undefined;
  if (fork && patched && branchPatch) {
    const at = Math.min(fork.at, grove.session('main').stepCount);
    if (touchesSetup(branchPatch) && at !== 0) throw new CliError(`--branch ${describePatch(branchPatch)} changes the setup or the seed, so it must fork at step 0 (0:KEY=VALUE), not step ${at}`);
    grove.fork('main', at, 'branch', patched, branchPatch);
    const leg = advance(grove, 'branch', steps - at, until);
    const forkRecord = main.records.find((rec) => rec.step === at) as StepRecord;
    branch = { ...leg, name: 'branch', at, records: [forkRecord].concat(leg.records) };
  }
  const finalOf = (name: string) => {
    const s = grove.session(name);
    return { step: s.stepCount, loss: s.fullLoss(), fingerprint: s.fingerprint(), parameters: Array.from(s.parameters) };
  };
  const replay = flags.replay ? grove.replay('main') : undefined;
  const mainFinal = finalOf('main');
  const branchFinal = branch ? finalOf('branch') : undefined;
  const diverged = [main, branch].some((l) => l?.divergedAt !== undefined) && until?.kind !== 'diverged';
  const code = diverged ? 3 : 0;
  if (flags.json) {
    const out: Record<string, unknown> = { trajectory: compact(main.records), stopped: main.stopped, final: mainFinal };
    if (main.divergedAt !== undefined) out.divergedAt = main.divergedAt;
    const stalled = trailingStall(main.records);
    if (stalled !== null) out.stalled = stalled;
    const origin = experiment.setup.data?.origin;
    if (origin) out.data = { hash: origin.hash, files: origin.files, ...(origin.classes ? { classes: origin.classes } : {}) };
    if (branch && fork) {
      out.branch = { at: branch.at, set: fork.overrides, trajectory: compact(branch.records), stopped: branch.stopped, final: branchFinal, ...(branch.divergedAt !== undefined ? { divergedAt: branch.divergedAt } : {}) };
    }
    if (replay) out.replay = replay;
    return { out: toJson(out) + '\n', warnings, code };
  }
  const divergence = (l: Leg): string[] =>
    l.divergedAt === undefined ? [] : [`the loss or the weights became non-finite at step ${l.divergedAt}; the final state is the last finite one (step ${l.divergedAt - 1})`];
  const stall = (l: Leg, lr: number): string[] => {
    const s = trailingStall(l.records);
    if (s === null) return [];
    const searches = ['lbfgs', 'cg', 'minibatch-lbfgs'].includes(experiment.recipe.optimizer);
    return [`no progress from step ${s.from} to ${s.to}: every update was zero although the gradient was not` +
      (searches ? ` — the line search found no lower loss from its first trial step lr = ${lr} and stayed in place; lr: 1 is the usual first trial step` : ` (lr = ${lr})`)];
  };
  const table = (records: StepRecord[]) => {
    const every = Math.max(1, Math.ceil(records.length / 20));
    return records.filter((r, i) => i % every === 0 || i === records.length - 1)
      .map((r) => `${String(r.step).padStart(6)}  ${r.loss.toPrecision(8).padStart(14)}  ${Number.isFinite(r.gradNorm) ? r.gradNorm.toExponential(3) : '-'}`);
  };
  const r = experiment.recipe;
  const lines = [
    `${r.optimizer}, lr ${r.lr}, batch ${r.batch}, seed ${experiment.seed}, ${grove.session('main').objective.parameterCount} parameters`,
    '  step            loss   |grad|',
    ...table(main.records),
    `stopped: ${main.stopped} after ${mainFinal.step} steps; final loss ${mainFinal.loss.toPrecision(8)}`,
    ...(until !== undefined && main.stopped === 'max-steps' ? [`the condition --until ${flags.until} was not met within ${steps} steps`] : []),
    ...divergence(main),
    ...stall(main, experiment.recipe.lr),
    `fingerprint ${mainFinal.fingerprint}`,
  ];
  const origin = experiment.setup.data?.origin;
  if (origin) lines.push(`data ${origin.files.map((f) => f.name).join(', ')}: hash ${origin.hash}${origin.classes ? `; classes ${origin.classes.map((c, i) => `${i}=${c}`).join(', ')}` : ''}`);
  if (branch && fork && branchFinal) {
    lines.push('', `branch at step ${branch.at} with ${fork.overrides.join(', ')}:`, ...table(branch.records),
      `stopped: ${branch.stopped} after ${branchFinal.step} steps; final loss ${branchFinal.loss.toPrecision(8)}`, ...divergence(branch));
  }
  if (replay) lines.push(`replay from the seed: ${replay.match}${replay.firstDifferingStep !== undefined ? ` (first difference at step ${replay.firstDifferingStep})` : ''}`);
  return { out: lines.join('\n') + '\n', warnings, code };
}
