/** Shared helpers of the command line: reading specs, reporting errors in one line each. */
import { readFileSync } from 'node:fs';
import { parse as parseYaml } from 'yaml';
import { parseSpec } from '../experiment';
import type { Experiment } from '../core/setup';

/** A failure the CLI reports as `stepwell: …` lines and a non-zero exit code. */
export class CliError extends Error {
  constructor(message: string, readonly exitCode = 2) {
    super(message);
  }
}

/** Minimal writable sink (process.stdout in use, a buffer in tests). */
export interface Sink {
  write(chunk: string): unknown;
}

/** Reads a file as UTF-8 text, with an error that names the file. */
export function readText(path: string, what: string): string {
  try {
    return readFileSync(path, 'utf8');
  } catch (e) {
    throw new CliError(`cannot read ${what} '${path}': ${(e as NodeJS.ErrnoException).code ?? (e as Error).message}`);
  }
}

/**
 * Parses a spec file into an experiment, applying `key=value` recipe overrides (values parsed
 * as YAML scalars, e.g. `lr=0.02`, `batch=full`). Every spec error becomes one line
 * `FILE:LINE:COL: message`.
 */
export function loadExperiment(path: string, overrides: readonly string[] = []): { experiment: Experiment; text: string } {
  let text = readText(path, 'spec');
  if (overrides.length > 0) {
    const doc: unknown = parseYaml(text);
    if (typeof doc !== 'object' || doc === null) throw new CliError(`${path}: the spec must be a mapping to apply --set`);
    const root = doc as Record<string, unknown>;
    const recipe = (typeof root.recipe === 'object' && root.recipe !== null ? root.recipe : {}) as Record<string, unknown>;
    for (const o of overrides) {
      const eq = o.indexOf('=');
      if (eq <= 0) throw new CliError(`--set needs KEY=VALUE (a recipe key), got '${o}'`);
      recipe[o.slice(0, eq)] = parseYaml(o.slice(eq + 1)) as unknown;
    }
    root.recipe = recipe;
    text = JSON.stringify(root);
  }
  const r = parseSpec(text);
  if (!r.ok) {
    const lines = r.errors.map((e) => `${path}${e.line !== undefined ? `:${e.line}:${e.col ?? 1}` : ''}: ${e.message}`);
    throw new CliError(lines.join('\n'));
  }
  return { experiment: r.experiment, text };
}

/** Parses a positive integer flag, with an error naming the flag. */
export function positiveInt(value: string | undefined, flag: string, fallback: number): number {
  if (value === undefined) return fallback;
  const n = Number(value);
  if (!Number.isInteger(n) || n < 0) throw new CliError(`${flag} must be a non-negative integer, got '${value}'`);
  return n;
}

/** Reads a JSON array of exactly `length` finite numbers from a file. */
export function readVector(path: string, length: number): Float64Array {
  let v: unknown;
  try {
    v = JSON.parse(readText(path, 'vector file'));
  } catch (e) {
    if (e instanceof CliError) throw e;
    throw new CliError(`vector file '${path}' is not JSON: ${(e as Error).message}`);
  }
  if (!Array.isArray(v) || v.length !== length) {
    throw new CliError(`vector file '${path}' must hold a JSON array of ${length} numbers (one per parameter), got ${Array.isArray(v) ? `${v.length} entries` : typeof v}`);
  }
  const bad = v.findIndex((x) => typeof x !== 'number' || !Number.isFinite(x));
  if (bad >= 0) throw new CliError(`vector file '${path}': entry [${bad}] must be a finite number, got ${JSON.stringify(v[bad])}`);
  return Float64Array.from(v as number[]);
}
