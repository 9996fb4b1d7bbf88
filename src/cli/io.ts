/** Shared helpers of the command line: reading specs, reporting errors in one line each. */
import { readFileSync, statSync } from 'node:fs';
import { dirname, resolve } from 'node:path';
import { DEFAULT_SPEC_LIMITS, parseLimits, parseSpec, readSpecValue, specFileRefs, type SpecError, type SpecFiles, type SpecLimits } from '../experiment';
import { formatPath } from '../experiment/path';
import { applyPatch, parseAssignments, patchExperiment, type SpecPatch } from '../experiment/patch';
import type { Experiment } from '../core/setup';

/** A failure the CLI reports as `stepwell: …` lines and a non-zero exit code. */
export class CliError extends Error {
  constructor(message: string, readonly exitCode = 2) {
    super(message);
  }
}

/** What a command produced: its standard output, warnings for standard error, and the exit code. */
export interface CommandResult {
  out: string;
  warnings: string[];
  code: number;
}

/** JSON text in which NaN and ±Infinity appear as the strings "NaN", "Infinity", "-Infinity" (JSON has no such numbers; null would hide them). */
export function toJson(value: unknown): string {
  return JSON.stringify(value, (_key, v: unknown) => (typeof v === 'number' && !Number.isFinite(v) ? String(v) : v));
}

/** Minimal writable sink (process.stdout in use, a buffer in tests). */
export interface Sink {
  write(chunk: string): unknown;
}

/** Reads a file as UTF-8 text, with an error that names the file. */
export function readText(path: string, what: string, maxChars = Number.MAX_SAFE_INTEGER): string {
  try {
    // a UTF-8 character takes at least one byte, so the size in bytes bounds the length in characters from above
    const size = statSync(path).size;
    if (size > 4 * maxChars) throw new CliError(`${what} '${path}' is ${size} bytes, far above the limit of ${maxChars} characters (--limit maxSpecChars=N)`);
    return readFileSync(path, 'utf8');
  } catch (e) {
    if (e instanceof CliError) throw e;
    throw new CliError(`cannot read ${what} '${path}': ${(e as NodeJS.ErrnoException).code ?? (e as Error).message}`);
  }
}

/** The spec errors as `FILE:LINE:COL: message` lines (line and column when known). */
function specErrorLines(path: string, errors: readonly SpecError[]): string {
  return errors.map((e) => `${path}${e.line !== undefined ? `:${e.line}:${e.col ?? 1}` : ''}: ${e.message}`).join('\n');
}

/**
 * Parses a spec file into an experiment, with `KEY=VALUE` overrides (`--set`; keys as
 * `experiment/patch.ts` reads them: `lr=0.02`, `batch=full`, `layers[1].lrScale=0.5`,
 * `model.init=he-normal`, `data.standardize=true`). Every spec error becomes one line
 * `FILE:LINE:COL: message`; an override's error names the key.
 *
 * @returns the experiment, the text, and the patch the overrides made (empty without any).
 */
export function loadExperiment(path: string, overrides: readonly string[] = [], limitList: readonly string[] = []): { experiment: Experiment; text: string; patch: SpecPatch; files: SpecFiles; limits: SpecLimits; warnings: string[] } {
  const limits = readLimits(limitList);
  const text = readText(path, 'spec', limits.maxSpecChars);
  const patch = readOverrides(overrides, '--set');
  const files = readSpecFiles(path, text, patch, limits.maxFileBytes);
  const r = Object.keys(patch).length > 0 ? patchExperiment(text, patch, { files, limits }) : parseSpec(text, 'auto', { files, limits });
  if (!r.ok) throw new CliError(specErrorLines(path, r.errors));
  const warnings = r.warnings.length > 0 ? specErrorLines(path, r.warnings).split('\n').map((l) => `warning: ${l}`) : [];
  return { experiment: r.experiment, text, patch, files, limits, warnings };
}

/** The limits `--limit NAME=VALUE` sets over the defaults. */
export function readLimits(list: readonly string[]): SpecLimits {
  const parsed = parseLimits(list);
  if (!parsed.ok) throw new CliError(parsed.errors.map((e) => `--limit: ${e}`).join('\n'));
  return parsed.limits;
}

/**
 * Reads the files the spec (with `patch` applied) names — data and initial weights — from disk,
 * relative to the spec file's folder. A file that cannot be read stops the command with the spec
 * key, the name and the resolved path.
 */
export function readSpecFiles(specPath: string, text: string, patch: SpecPatch = {}, maxBytes = DEFAULT_SPEC_LIMITS.maxFileBytes): Map<string, Uint8Array> {
  const files = new Map<string, Uint8Array>();
  const read = readSpecValue(text);
  if (!read.ok) return files; // the parse that follows reports the syntax errors
  const applied = Object.keys(patch).length > 0 ? applyPatch(read.value, patch) : { ok: true as const, value: read.value };
  if (!applied.ok) return files;
  for (const ref of specFileRefs(applied.value)) {
    if (files.has(ref.name)) continue;
    const full = resolve(dirname(specPath), ref.name);
    try {
      const size = statSync(full).size;
      if (size > maxBytes) throw new CliError(`${specPath}: ${formatPath(ref.path)}: '${ref.name}' is ${size} bytes, above the limit of ${maxBytes} (--limit maxFileBytes=N)`);
      files.set(ref.name, new Uint8Array(readFileSync(full)));
    } catch (e) {
      if (e instanceof CliError) throw e;
      throw new CliError(`${specPath}: ${formatPath(ref.path)}: cannot read '${ref.name}' (${full}): ${(e as NodeJS.ErrnoException).code ?? (e as Error).message}`);
    }
  }
  return files;
}

/** `KEY=VALUE` strings as a patch, with an error naming `flag` and each bad assignment. */
export function readOverrides(list: readonly string[], flag: string): SpecPatch {
  const parsed = parseAssignments(list);
  if (!parsed.ok) throw new CliError(parsed.errors.map((e) => `${flag}: ${e}`).join('\n'));
  return parsed.patch;
}

/**
 * Parses a non-negative integer flag written in decimal digits (no `0x10`, `1e3` or empty
 * text), at most `max`, with an error naming the flag.
 */
export function positiveInt(value: string | undefined, flag: string, fallback: number, max = Number.MAX_SAFE_INTEGER): number {
  if (value === undefined) return fallback;
  const shown = value.length > 40 ? `${value.slice(0, 40)}…` : value;
  if (!/^\d+$/.test(value)) throw new CliError(`${flag} must be a non-negative integer in decimal digits, got '${shown}'`);
  const n = Number(value);
  if (!(n <= max)) throw new CliError(`${flag} must be at most ${max}, got ${shown}`);
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
