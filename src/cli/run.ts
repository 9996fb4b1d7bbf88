/** `stepwell run SPEC --steps N`: a trajectory from spec + seed, optionally with a branch. */
import { Grove, type StopCondition } from '../core/session';
import type { Experiment } from '../core/setup';
import type { StepRecord } from '../core/state';
import { describePatch, patchExperiment, splitAssignments, touchesSetup } from '../experiment/patch';
import { CliError, loadExperiment, positiveInt, readOverrides, readSpecFiles } from './io';

/** Flags of `run`. */
export interface RunFlags {
  json?: boolean;
  steps?: string;
  until?: string;
  set?: string[];
  branch?: string;
  replay?: boolean;
}

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
}

/** Advances one branch of the grove by `steps` updates or until the condition holds. */
function advance(grove: Grove, name: string, steps: number, until: StopCondition | undefined): Leg {
  if (until === undefined) return { records: grove.step(name, steps), stopped: 'steps' };
  const r = grove.runUntil(name, until, steps);
  return { records: r.records, stopped: r.reason };
}

function compact(records: StepRecord[]): { step: number; loss: number; gradNorm: number; updateNorm: number; lr: number }[] {
  return records.map((r) => ({ step: r.step, loss: r.loss, gradNorm: r.gradNorm, updateNorm: r.updateNorm, lr: r.lr }));
}

/** Runs the command and returns its output text. */
export function runCommand(path: string, flags: RunFlags): string {
  if (flags.steps === undefined) throw new CliError('run needs --steps N (the number of optimizer updates, or the cap with --until)');
  const steps = positiveInt(flags.steps, '--steps', 0);
  const { experiment, text, patch } = loadExperiment(path, flags.set);
  const until = flags.until === undefined ? undefined : parseUntil(flags.until);
  const fork = flags.branch === undefined ? undefined : parseBranch(flags.branch);
  if (fork && fork.at > steps) throw new CliError(`--branch forks at step ${fork.at}, after the last step ${steps}`);
  // The branch's experiment goes through the same validation as the spec itself.
  const branchPatch = fork ? readOverrides(fork.overrides, '--branch') : undefined;
  let patched: Experiment | undefined;
  if (branchPatch) {
    const r = patchExperiment(text, { ...patch, ...branchPatch }, { files: readSpecFiles(path, text, { ...patch, ...branchPatch }) });
    if (!r.ok) throw new CliError(r.errors.map((e) => `${path}: --branch: ${e.message}`).join('\n'));
    patched = r.experiment;
  }

  const grove = Grove.create(experiment);
  const main: Leg = { records: grove.trajectory('main').slice(), stopped: 'steps' };
  const first = advance(grove, 'main', steps, until);
  main.records.push(...first.records);
  main.stopped = first.stopped;
  let branch: (Leg & { name: string; at: number }) | undefined;
  if (fork && patched && branchPatch) {
    const at = Math.min(fork.at, grove.session('main').stepCount);
    if (touchesSetup(branchPatch) && at !== 0) throw new CliError(`--branch ${describePatch(branchPatch)} changes the setup or the seed, so it must fork at step 0 (0:KEY=VALUE), not step ${at}`);
    grove.fork('main', at, 'branch', patched, branchPatch);
    const leg = advance(grove, 'branch', steps - at, until);
    branch = { name: 'branch', at, records: [grove.trajectory('branch')[at], ...leg.records], stopped: leg.stopped };
  }
  const finalOf = (name: string) => {
    const s = grove.session(name);
    return { step: s.stepCount, loss: s.fullLoss(), fingerprint: s.fingerprint(), parameters: Array.from(s.parameters) };
  };
  const replay = flags.replay ? grove.replay('main') : undefined;
  const mainFinal = finalOf('main');
  const branchFinal = branch ? finalOf('branch') : undefined;
  if (flags.json) {
    const out: Record<string, unknown> = { trajectory: compact(main.records), stopped: main.stopped, final: mainFinal };
    const origin = experiment.setup.data?.origin;
    if (origin) out.data = { hash: origin.hash, files: origin.files, ...(origin.classes ? { classes: origin.classes } : {}) };
    if (branch && fork) {
      out.branch = { at: branch.at, set: fork.overrides, trajectory: compact(branch.records), stopped: branch.stopped, final: branchFinal };
    }
    if (replay) out.replay = replay;
    return JSON.stringify(out) + '\n';
  }
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
    `fingerprint ${mainFinal.fingerprint}`,
  ];
  const origin = experiment.setup.data?.origin;
  if (origin) lines.push(`data ${origin.files.map((f) => f.name).join(', ')}: hash ${origin.hash}${origin.classes ? `; classes ${origin.classes.map((c, i) => `${i}=${c}`).join(', ')}` : ''}`);
  if (branch && fork && branchFinal) {
    lines.push('', `branch at step ${branch.at} with ${fork.overrides.join(', ')}:`, ...table(branch.records),
      `stopped: ${branch.stopped} after ${branchFinal.step} steps; final loss ${branchFinal.loss.toPrecision(8)}`);
  }
  if (replay) lines.push(`replay from the seed: ${replay.match}${replay.firstDifferingStep !== undefined ? ` (first difference at step ${replay.firstDifferingStep})` : ''}`);
  return lines.join('\n') + '\n';
}
