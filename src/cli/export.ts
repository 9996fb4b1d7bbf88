/**
 * `stepwell export SOURCE --to pytorch|weights|trajectory`: a recipe as a PyTorch script, final
 * weights (.safetensors, .npy) or a trajectory (.csv, .npy, .safetensors; `--csv` for CSV).
 *
 * SOURCE is a spec file (the recipe is run here for `--steps N`) or a notebook (`NOTEBOOK.ipynb
 * --cell N [--branch NAME]`: what the cell's ledger recorded for that branch — its stored records,
 * the weights of its tip or of step `--steps`, its recipe). {@link resolveSource} turns either into
 * one {@link Source}; the writers do not know which it was.
 */
import { writeFileSync } from 'node:fs';
import { dirname, relative, resolve } from 'node:path';
import { Rng } from '../core/rng';
import { Session } from '../core/session/live';
import { fingerprintState } from '../core/session/state-data';
import { writeNpy, writeSafetensors } from '../core/data';
import type { Experiment } from '../core/setup';
import type { SessionState, StepRecord } from '../core/state';
import { describePatch, patchExperiment, touchesSetup, type SpecPatch } from '../experiment/patch';
import { Grove } from '../core/session/grove';
import { CliError, loadExperiment, positiveInt, readOverrides, readSpecFiles, type CommandResult } from './io';
import { MAX_STEPS, parseBranch } from './run';
import { NotExportable, pytorchScript } from './export/pytorch';
import { notebookBranch, type NotebookBranch } from './export-notebook';
import pkg from '../../package.json';

/** Flags of `export`. */
export interface ExportFlags {
  /** `NAME=VALUE` size limits over the defaults (`experiment/limits.ts`). */
  limit?: string[];
  to?: string;
  out?: string;
  steps?: string;
  set?: string[];
  /** A spec: `STEP:KEY=VALUE,…` (a branch to export); a notebook: the name of a branch of the cell. */
  branch?: string;
  /** The cell of a notebook source (its index, counting from 0). */
  cell?: string;
  /** Shorthand for `--to trajectory` as CSV (on standard output without `--out`). */
  csv?: boolean;
}

/** What an export works from. */
interface Source {
  experiment: Experiment;
  /** How the header names it: the spec path as given, or `NOTEBOOK cell N branch B`. */
  label: string;
  patch: SpecPatch;
  /** The spec file, or the notebook: data paths of a script are relative to its folder. */
  specPath: string;
  /** The spec's warnings, one line each. */
  warnings: string[];
  /** For a notebook source: what the ledger recorded (records, states at steps), exported instead of a new run. */
  recorded?: NotebookBranch;
  /**
   * A branch forked after step 0: the script starts from the branch's state at its fork step —
   * stored in the notebook's ledger, or `replayed` here from a spec file.
   */
  start?: { step: number; state: SessionState; replayed?: boolean };
}

/** True when SOURCE names a notebook. */
function isNotebook(path: string): boolean {
  return /\.ipynb$/i.test(path);
}

/** Resolves SOURCE (a spec file with --set / --branch patches, or a notebook cell's branch) into one experiment. */
function resolveSource(path: string, flags: ExportFlags): Source {
  if (isNotebook(path)) {
    if (flags.set !== undefined) throw new CliError(`--set applies to a spec file; a notebook's branches are exported as their ledger recorded them (choose one with --branch NAME)`);
    const b = notebookBranch(path, flags.cell, flags.branch);
    // A branch forked after step 0 carries its parent's state on: the script starts from the state
    // the ledger stored at the branch's fork step (weights, optimizer buffers, batch order).
    const at = b.forkSteps[0] ?? 0;
    const start = at > 0 ? { step: at, state: b.stateAt(at) } : undefined;
    return { experiment: b.experiment, label: b.label, patch: {}, specPath: path, warnings: b.warnings, recorded: b, ...(start ? { start } : {}) };
  }
  if (flags.cell !== undefined) throw new CliError(`--cell applies to a notebook source (NOTEBOOK.ipynb), not to the spec file '${path}'`);
  const { experiment, text, patch, limits, warnings } = loadExperiment(path, flags.set, flags.limit);
  if (flags.branch === undefined) return { experiment, label: path, patch, specPath: path, warnings };
  const fork = parseBranch(flags.branch);
  const branchPatch = readOverrides(fork.overrides, '--branch');
  const both = { ...patch, ...branchPatch };
  const r = patchExperiment(text, both, { files: readSpecFiles(path, text, both, limits.maxFileBytes), limits });
  if (!r.ok) throw new CliError(r.errors.map((e) => `${path}: --branch: ${e.message}`).join('\n'));
  if (fork.at === 0) return { experiment: r.experiment, label: path, patch: both, specPath: path, warnings };
  if (touchesSetup(branchPatch)) throw new CliError(`--branch ${flags.branch}: ${describePatch(branchPatch)} changes the setup or the seed, so it must fork at step 0 (0:KEY=VALUE), not step ${fork.at}`);
  return { experiment: r.experiment, label: path, patch: both, specPath: path, warnings, start: replayedStart(path, experiment, r.experiment, branchPatch, fork.at) };
}

/**
 * The state where a spec file's `--branch S:…` starts (S > 0): a spec has no ledger, so the
 * trunk (the spec with `--set`) is run here to step S — the engine is deterministic, so this is
 * the state `stepwell run SPEC --branch S:…` forks from — and carried over to the branch's recipe
 * as a fork does (`adaptSessionState`).
 *
 * @throws CliError when S is beyond the step limit, or the trunk diverges before step S.
 */
function replayedStart(path: string, trunk: Experiment, branch: Experiment, branchPatch: SpecPatch, at: number): { step: number; state: SessionState; replayed: true } {
  if (at > MAX_STEPS) throw new CliError(`--branch forks at step ${at}, beyond the limit of ${MAX_STEPS} steps`);
  const grove = Grove.create(trunk);
  const r = grove.runUntil('main', { kind: 'steps', count: at }, at);
  const last = r.records[r.records.length - 1];
  const session = grove.session('main');
  if (session.stepCount < at || (last !== undefined && !Number.isFinite(last.loss)) || !session.parameters.every(Number.isFinite)) {
    throw new CliError(`${path}: the trunk diverged at step ${last?.step ?? 0} (loss ${last?.loss ?? NaN}), before the fork step ${at}: fork earlier, or fix the trunk's recipe (stepwell run ${path} --steps ${at})`);
  }
  grove.fork('main', at, 'branch', branch, branchPatch);
  return { step: at, state: grove.tipState('branch'), replayed: true };
}

/** The records (record 0 first), final weights, step and fingerprint to export: a run of `steps` updates, or what a notebook recorded. */
function trajectoryOf(src: Source, steps: number | undefined): { records: StepRecord[]; weights: Float64Array; step: number; fingerprint: string; warnings: string[] } {
  const r = src.recorded;
  if (r === undefined) {
    const session = Session.create(src.experiment);
    const records = [session.initialRecord(), ...session.step(steps ?? 0)];
    return { records, weights: Float64Array.from(session.parameters), step: session.stepCount, fingerprint: session.fingerprint(), warnings: [] };
  }
  const at = steps ?? r.tip;
  if (at > r.tip) throw new CliError(`${r.label}: --steps ${at} is beyond the branch's tip (step ${r.tip}); step the cell further, or export a spec file to run longer`);
  const state = r.stateAt(at);
  const records = r.records.filter((x) => x.step <= at);
  const warnings = records.length < at + 1 ? [`${r.label}: the ledger keeps ${records.length} of the ${at + 1} records up to step ${at} (thinned when saved); all of them are written`] : [];
  return { records, weights: state.params, step: at, fingerprint: fingerprintState(state), warnings };
}

const TRAJECTORY_COLUMNS = ['step', 'loss', 'batchLoss', 'heldOutLoss', 'gradNorm', 'updateNorm', 'lr', 'evaluations'] as const;

function trajectoryColumns(records: StepRecord[]): { name: string; values: Float64Array }[] {
  return TRAJECTORY_COLUMNS.filter((c) => c !== 'heldOutLoss' || records.some((r) => r.heldOutLoss !== undefined)).map((c) => ({
    name: c,
    values: Float64Array.from(records, (r) => (c === 'heldOutLoss' ? r.heldOutLoss ?? NaN : r[c])),
  }));
}

/** Layer tensors of a flat parameter vector, named as the exported Sequential's state_dict. */
function namedTensors(e: Experiment, w: Float64Array): { name: string; shape: number[]; data: Float64Array }[] {
  const m = e.setup.model;
  if (m.kind !== 'network') return [{ name: 'params', shape: [w.length], data: w }];
  const out: { name: string; shape: number[]; data: Float64Array }[] = [];
  let fanIn = m.inputs;
  let at = 0;
  m.layers.forEach((l, k) => {
    out.push({ name: `${2 * k}.weight`, shape: [l.units, fanIn], data: w.slice(at, at + l.units * fanIn) });
    at += l.units * fanIn;
    out.push({ name: `${2 * k}.bias`, shape: [l.units], data: w.slice(at, at + l.units) });
    at += l.units;
    fanIn = l.units;
  });
  return out;
}

/**
 * A number in a CSV cell: as JavaScript prints it (the shortest text that reads back to the same
 * double, so the CSV round-trips bit for bit). A value not measured — the held-out loss of a
 * record without one, the batch loss of record 0 (no update yet) — is an empty cell; other
 * non-finite values are written `NaN`, `inf`, `-inf` (what NumPy and pandas read).
 */
function csvNumber(column: string, v: number, step: number): string {
  if (Number.isNaN(v)) return column === 'heldOutLoss' || (column === 'batchLoss' && step === 0) ? '' : 'NaN';
  if (!Number.isFinite(v)) return v > 0 ? 'inf' : '-inf';
  return String(v);
}

function extension(out: string): string {
  const m = /\.([a-z]+)$/i.exec(out);
  return m ? m[1].toLowerCase() : '';
}

function write(out: string, bytes: Uint8Array | string): void {
  try {
    writeFileSync(out, bytes);
  } catch (e) {
    throw new CliError(`cannot write '${out}': ${(e as NodeJS.ErrnoException).code ?? (e as Error).message}`);
  }
}

/** Runs the command: text for stdout ('' when everything went to --out), the spec's warnings, exit code 0. */
export function exportCommand(path: string, flags: ExportFlags): CommandResult {
  if (flags.csv && flags.to !== undefined && flags.to !== 'trajectory') throw new CliError(`--csv writes the trajectory; it cannot be combined with --to ${flags.to}`);
  if (flags.csv && flags.out !== undefined && extension(flags.out) !== 'csv') throw new CliError(`--csv writes CSV; --out ${flags.out} must end in .csv (or leave --out out to print it)`);
  const src = resolveSource(path, flags);
  const warnings = [...src.warnings];
  return { out: writeExport(path, flags, src, warnings), warnings, code: 0 };
}

function writeExport(path: string, flags: ExportFlags, src: Source, warnings: string[]): string {
  const to = flags.csv ? 'trajectory' : (flags.to ?? 'pytorch');
  const e = src.experiment;
  switch (to) {
    case 'pytorch': {
      const session = src.start === undefined ? Session.create(e) : undefined;
      const outDir = flags.out !== undefined ? dirname(resolve(flags.out)) : process.cwd();
      const dataDir = relative(outDir, dirname(resolve(src.specPath))) || '.';
      let script: string;
      try {
        script = pytorchScript(e, {
          version: pkg.version,
          spec: src.label,
          patch: Object.keys(src.patch).length > 0 ? describePatch(src.patch) : '',
          fingerprint: session !== undefined ? session.fingerprint() : fingerprintState((src.start as { state: SessionState }).state),
          dataDir,
          batchState: Rng.fromSeed(e.seed).fork('batches').state().s,
          initial: Float64Array.from(session !== undefined ? session.parameters : (src.start as { state: SessionState }).state.params),
          ...(src.start ? { start: src.start } : {}),
        });
      } catch (err) {
        if (err instanceof NotExportable) throw new CliError(`${path}: ${err.message}`);
        throw err;
      }
      if (flags.out === undefined) return script;
      write(flags.out, script);
      return '';
    }
    case 'weights':
    case 'trajectory': {
      if (flags.steps === undefined && src.recorded === undefined) throw new CliError(`export --to ${to} needs --steps N (the updates to run first)`);
      if (flags.out === undefined && !flags.csv) throw new CliError(`export --to ${to} needs --out FILE (.${to === 'weights' ? 'safetensors or .npy' : 'csv, .npy or .safetensors'})`);
      const steps = flags.steps === undefined ? undefined : positiveInt(flags.steps, '--steps', 0);
      const got = trajectoryOf(src, steps);
      warnings.push(...got.warnings);
      const records = got.records;
      const ext = flags.out === undefined ? 'csv' : extension(flags.out);
      const meta = { stepwell: pkg.version, spec: src.label, steps: String(got.step), fingerprint: got.fingerprint };
      if (to === 'weights') {
        const out = flags.out as string;
        const w = got.weights;
        if (ext === 'safetensors') write(out, writeSafetensors(namedTensors(e, w), meta));
        else if (ext === 'npy') write(out, writeNpy(w, [w.length]));
        else throw new CliError(`--out ${out}: weights are written as .safetensors (named like the exported nn.Sequential's state_dict) or .npy (one flat vector in Stepwell's layout)`);
        return '';
      }
      const cols = trajectoryColumns(records);
      if (ext === 'csv') {
        const lines = [cols.map((c) => c.name).join(','), ...records.map((_, i) => cols.map((c) => csvNumber(c.name, c.values[i], records[i].step)).join(','))];
        const text = lines.join('\n') + '\n';
        if (flags.out === undefined) return text;
        write(flags.out, text);
      } else if (flags.out === undefined) {
        throw new CliError('export --to trajectory needs --out FILE (.csv, .npy or .safetensors), or --csv to print CSV');
      } else if (ext === 'npy') {
        const n = records.length;
        const m = new Float64Array(n * cols.length);
        cols.forEach((c, j) => c.values.forEach((v, i) => (m[i * cols.length + j] = v)));
        write(flags.out, writeNpy(m, [n, cols.length]));
        return `columns: ${cols.map((c) => c.name).join(', ')}\n`;
      } else if (ext === 'safetensors') {
        write(flags.out, writeSafetensors(cols.map((c) => ({ name: c.name, shape: [c.values.length], data: c.values })), meta));
      } else {
        throw new CliError(`--out ${flags.out}: a trajectory is written as .csv, .npy or .safetensors`);
      }
      return '';
    }
    default:
      throw new CliError(`--to must be pytorch, weights or trajectory, got '${to}'`);
  }
}
