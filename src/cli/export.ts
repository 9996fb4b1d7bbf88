/**
 * `stepwell export SOURCE --to pytorch|weights|trajectory`: a spec's recipe as a PyTorch script,
 * its final weights (.safetensors, .npy) or its trajectory (.csv, .npy, .safetensors).
 *
 * SOURCE is a spec file today; the command resolves it to (experiment, spec text, files) in one
 * place ({@link resolveSource}) so a notebook source (`NOTEBOOK --cell N`, reading the cell's
 * spec and ledger) can be added there without touching the writers.
 */
import { writeFileSync } from 'node:fs';
import { dirname, relative, resolve } from 'node:path';
import { Rng } from '../core/rng';
import { Session } from '../core/session/live';
import { writeNpy, writeSafetensors } from '../core/data';
import type { Experiment } from '../core/setup';
import type { StepRecord } from '../core/state';
import { describePatch, patchExperiment, type SpecPatch } from '../experiment/patch';
import { CliError, loadExperiment, positiveInt, readOverrides, readSpecFiles, type CommandResult } from './io';
import { parseBranch } from './run';
import { NotExportable, pytorchScript } from './export/pytorch';
import pkg from '../../package.json';

/** Flags of `export`. */
export interface ExportFlags {
  /** `NAME=VALUE` size limits over the defaults (`experiment/limits.ts`). */
  limit?: string[];
  to?: string;
  out?: string;
  steps?: string;
  set?: string[];
  branch?: string;
}

/** What an export works from. */
interface Source {
  experiment: Experiment;
  /** How the header names it: the spec path as given. */
  label: string;
  patch: SpecPatch;
  specPath: string;
  /** The spec's warnings, one line each. */
  warnings: string[];
}

/** Resolves SOURCE (a spec file) and the --set / --branch patches into one experiment. */
function resolveSource(path: string, flags: ExportFlags): Source {
  const { experiment, text, patch, limits, warnings } = loadExperiment(path, flags.set, flags.limit);
  if (flags.branch === undefined) return { experiment, label: path, patch, specPath: path, warnings };
  const fork = parseBranch(flags.branch);
  if (fork.at !== 0) {
    throw new CliError(`--branch ${flags.branch}: export writes a recipe from step 0; a branch forked at step ${fork.at} continues the parent's optimizer state, which is not exported yet (export the branch's recipe from the start with --branch 0:${fork.overrides.join(',')})`);
  }
  const both = { ...patch, ...readOverrides(fork.overrides, '--branch') };
  const r = patchExperiment(text, both, { files: readSpecFiles(path, text, both, limits.maxFileBytes), limits });
  if (!r.ok) throw new CliError(r.errors.map((e) => `${path}: --branch: ${e.message}`).join('\n'));
  return { experiment: r.experiment, label: path, patch: both, specPath: path, warnings };
}

/** Runs `steps` updates and returns the records (record 0 first) and the session. */
function runFor(e: Experiment, steps: number): { records: StepRecord[]; session: Session } {
  const session = Session.create(e);
  const records = [session.initialRecord(), ...session.step(steps)];
  return { records, session };
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
  const src = resolveSource(path, flags);
  return { out: writeExport(path, flags, src), warnings: src.warnings, code: 0 };
}

function writeExport(path: string, flags: ExportFlags, src: Source): string {
  const to = flags.to ?? 'pytorch';
  const e = src.experiment;
  switch (to) {
    case 'pytorch': {
      const session = Session.create(e);
      const outDir = flags.out !== undefined ? dirname(resolve(flags.out)) : process.cwd();
      const dataDir = relative(outDir, dirname(resolve(src.specPath))) || '.';
      let script: string;
      try {
        script = pytorchScript(e, {
          version: pkg.version,
          spec: src.label,
          patch: Object.keys(src.patch).length > 0 ? describePatch(src.patch) : '',
          fingerprint: session.fingerprint(),
          dataDir,
          batchState: Rng.fromSeed(e.seed).fork('batches').state().s,
          initial: Float64Array.from(session.parameters),
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
      if (flags.steps === undefined) throw new CliError(`export --to ${to} needs --steps N (the updates to run first)`);
      if (flags.out === undefined) throw new CliError(`export --to ${to} needs --out FILE (.${to === 'weights' ? 'safetensors or .npy' : 'csv, .npy or .safetensors'})`);
      const steps = positiveInt(flags.steps, '--steps', 0);
      const { records, session } = runFor(e, steps);
      const ext = extension(flags.out);
      const meta = { stepwell: pkg.version, spec: src.label, steps: String(session.stepCount), fingerprint: session.fingerprint() };
      if (to === 'weights') {
        const w = Float64Array.from(session.parameters);
        if (ext === 'safetensors') write(flags.out, writeSafetensors(namedTensors(e, w), meta));
        else if (ext === 'npy') write(flags.out, writeNpy(w, [w.length]));
        else throw new CliError(`--out ${flags.out}: weights are written as .safetensors (named like the exported nn.Sequential's state_dict) or .npy (one flat vector in Stepwell's layout)`);
        return '';
      }
      const cols = trajectoryColumns(records);
      if (ext === 'csv') {
        const lines = [cols.map((c) => c.name).join(','), ...records.map((_, i) => cols.map((c) => (Number.isNaN(c.values[i]) ? '' : String(c.values[i]))).join(','))];
        write(flags.out, lines.join('\n') + '\n');
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
