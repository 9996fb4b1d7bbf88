/**
 * The spec layer: reads the text of a stepwell cell (YAML or JSON), validates it against
 * `spec.schema.json` and the cross-field rules, and produces the normalized
 * {@link Experiment} with every default applied. Every problem is reported at once,
 * with the path it concerns and its line and column, sorted by position.
 *
 * Pure: no DOM, no file system; runs in Node, a Web Worker and the browser.
 */
import type { Experiment } from '../core/setup';
import { buildExperiment } from './normalize';
import { crossCheck } from './checks';
import { DEFAULT_SPEC_LIMITS, grouped, limitProblems, type SpecLimits } from './limits';
import type { CheckProblem } from './checks';
import { describe, formatPath, type Path } from './path';
import { readSource } from './source';
import type { ReadProblem, SourceText } from './source';
import { checkSchema } from './schema-check';
import { loadSpecFiles, specFileRefs, type SpecFiles } from './files';
import { checkTakenData } from './take';

export { TEMPLATE_SPEC } from './template';
export { DEFAULT_SPEC_LIMITS, parseLimits, type SpecLimits } from './limits';
export { MAGIC_LINE, maskMagicLine } from './source';
export { RECIPE_DEFAULTS } from './normalize';
export { specFileNames, specFileRefs, usedFiles, type SpecFiles } from './files';

/** Options of {@link parseSpec}. */
export interface SpecOptions {
  /** Bytes of the files the spec names (data, weights), keyed by the name as written; see `files.ts`. */
  files?: SpecFiles;
  /** Size limits checked before allocation (default {@link DEFAULT_SPEC_LIMITS}). */
  limits?: SpecLimits;
  /**
   * Why a named file could not be read, keyed by the name as written (e.g. "not found next to the
   * notebook"): the problem at the spec key that names it says so instead of a generic message.
   */
  fileProblems?: ReadonlyMap<string, string>;
  /**
   * Check everything but the files: named files are not read, and the experiment leaves out
   * what they hold (`setup.data` undefined for `data.file`, initial weights drawn by `model.init`).
   * For a live check of the editor's text or a description of a stored ledger only — never step
   * such an experiment. Default false.
   */
  deferFiles?: boolean;
}

/**
 * One problem with a spec. `message` is a complete sentence that already names the
 * path ("model.layers[1].units must be a positive integer, got 0"); `line` and `col`
 * are 1-based and present whenever the text has a node (or ancestor) for the path.
 */
export interface SpecError {
  /** Where the problem is, like `model.layers[1].units`; empty for the whole spec or a syntax error. */
  path: string;
  message: string;
  line?: number;
  col?: number;
}

/** Outcome of {@link parseSpec}: the experiment and any warnings, or every error. */
export type SpecResult = { ok: true; experiment: Experiment; warnings: SpecError[] } | { ok: false; errors: SpecError[] };

interface Placed extends SpecError {
  offset: number;
}

function place(source: SourceText, p: CheckProblem): Placed {
  const pos = source.locate(p.path, p.atKey ? 'key' : 'value', p.within);
  const e: Placed = { path: formatPath(p.path), message: p.message, offset: pos ? pos.offset : Number.MAX_SAFE_INTEGER };
  if (pos) {
    e.line = pos.line;
    e.col = pos.col;
  }
  return e;
}

function fromRead(p: ReadProblem): Placed {
  const e: Placed = { path: '', message: p.message, offset: p.position ? p.position.offset : Number.MAX_SAFE_INTEGER };
  if (p.position) {
    e.line = p.position.line;
    e.col = p.position.col;
  }
  return e;
}

/** Sorts by position and strips the internal offset; drops exact duplicates. */
function finish(list: Placed[]): SpecError[] {
  const seen = new Set<string>();
  const all = list
    .slice()
    .sort((a, b) => a.offset - b.offset || (a.message < b.message ? -1 : a.message > b.message ? 1 : 0))
    .filter((e) => {
      const k = `${e.path}\u0000${e.message}`;
      if (seen.has(k)) return false;
      seen.add(k);
      return true;
    })
    .map(({ offset: _offset, ...rest }) => ({ ...rest, message: shortened(rest.message) }));
  if (all.length <= MAX_PROBLEMS) return all;
  const rest = all.length - MAX_PROBLEMS;
  return [...all.slice(0, MAX_PROBLEMS), { path: '', message: `… and ${rest} more problem${rest === 1 ? '' : 's'} after these (fix the first ones; many share one cause)` }];
}

/** Longest message kept whole; longer ones (a parser quoting a line of garbage) are cut. */
const MAX_MESSAGE = 400;

function shortened(message: string): string {
  return message.length <= MAX_MESSAGE ? message : `${message.slice(0, MAX_MESSAGE - 1)}… (${message.length} characters)`;
}

/** Most problems reported for one spec (sorted by position; a count of the rest follows). */
export const MAX_PROBLEMS = 50;

/**
 * Parses and validates spec text.
 * @param text - the cell's spec, YAML or JSON.
 * @param format - `auto` (default) reads YAML, which includes JSON; `json` insists on strict JSON syntax.
 * @returns the normalized experiment with warnings, or all errors sorted by position. Never throws on bad input.
 */
export function parseSpec(text: string, format: 'auto' | 'yaml' | 'json' = 'auto', options: SpecOptions = {}): SpecResult {
  if (typeof text !== 'string') return { ok: false, errors: [{ path: '', message: `the spec must be text, got ${typeof text}` }] };
  const maxChars = (options.limits ?? DEFAULT_SPEC_LIMITS).maxSpecChars;
  if (text.length > maxChars) {
    return { ok: false, errors: [{ path: '', message: `the spec is ${grouped(text.length)} characters long, above the limit of ${grouped(maxChars)} (limit maxSpecChars): keep large data in a file (data.file) instead of inline` }] };
  }
  const read = readSource(text, format === 'json' ? 'json' : 'yaml');
  if (!read.ok) return { ok: false, errors: finish(read.problems.map(fromRead)) };
  const { source } = read;
  const value = source.value;
  if (value === undefined || value === null)
    return { ok: false, errors: [{ path: '', message: 'the spec is empty: it needs at least a model (start from the template)' }] };
  if (typeof value !== 'object' || Array.isArray(value)) {
    const e = place(source, { path: [], message: `the spec must be a mapping of keys (seed, model, data, loss, regularization, recipe), got ${describe(value)}` });
    return { ok: false, errors: finish([e]) };
  }
  const checked = checkValue(value, (p) => place(source, p), options);
  if (!checked.ok) return checked;
  return { ok: true, experiment: checked.experiment, warnings: finish([...read.warnings.map(fromRead), ...checked.placedWarnings]) };
}

/** Schema and cross-field checks of a plain spec value, then the build; problems placed by `where`. */
function checkValue(value: object, where: (p: CheckProblem) => Placed, options: SpecOptions): { ok: false; errors: SpecError[] } | { ok: true; experiment: Experiment; placedWarnings: Placed[] } {
  const schemaProblems = checkSchema(value);
  const cross = crossCheck(value);
  const errors = [...schemaProblems.map(where), ...cross.errors.map(where)];
  if (errors.length > 0) return { ok: false, errors: finish(errors) };
  const limits = options.limits ?? DEFAULT_SPEC_LIMITS;
  const tooBig = limitProblems(value as Record<string, unknown>, limits);
  if (tooBig.length > 0) return { ok: false, errors: finish(tooBig.map(where)) };
  const deferred = options.deferFiles === true && specFileRefs(value).length > 0;
  const { loaded, problems } = deferred ? { loaded: {}, problems: [] } : loadSpecFiles(value as Record<string, unknown>, options.files, limits, options.fileProblems);
  if (problems.length > 0) return { ok: false, errors: finish(problems.map(where)) };
  let experiment: Experiment;
  try {
    experiment = buildExperiment(value, loaded, deferred);
  } catch (err) {
    // A gap between the checks and the builder is a bug of ours; say so instead of throwing.
    return { ok: false, errors: [{ path: '', message: `internal error while building the experiment (please report): ${err instanceof Error ? err.message : String(err)}` }] };
  }
  const taken = checkTakenData(value);
  return { ok: true, experiment, placedWarnings: [...cross.warnings, ...(taken ? [taken] : [])].map(where) };
}

/**
 * Validates a plain spec value (already read from text, e.g. with a patch applied) into an
 * experiment. Problems carry their path but no line or column: the value has no text.
 */
export function parseSpecValue(value: unknown, options: SpecOptions = {}): SpecResult {
  if (typeof value !== 'object' || value === null || Array.isArray(value)) {
    return { ok: false, errors: [{ path: '', message: `the spec must be a mapping of keys (seed, model, data, loss, regularization, recipe), got ${describe(value)}` }] };
  }
  const unplaced = (p: CheckProblem): Placed => ({ path: formatPath(p.path), message: p.message, offset: Number.MAX_SAFE_INTEGER });
  const checked = checkValue(value, unplaced, options);
  return checked.ok ? { ok: true, experiment: checked.experiment, warnings: finish(checked.placedWarnings) } : checked;
}

/**
 * Reads spec text into its plain value (YAML or JSON) without validating it, e.g. to apply a
 * patch before {@link parseSpecValue}. Syntax problems come back with line and column.
 */
export function readSpecValue(text: string): { ok: true; value: unknown } | { ok: false; errors: SpecError[] } {
  const read = readSource(text, 'yaml');
  return read.ok ? { ok: true, value: read.source.value } : { ok: false, errors: finish(read.problems.map(fromRead)) };
}

/**
 * A problem at `path` of the spec text, with the line and column of the value there (of the
 * nearest written ancestor when the path itself is not written; none when the text does not parse).
 */
export function specProblemAt(text: string, path: Path, message: string): SpecError {
  const read = readSource(text, 'yaml');
  if (!read.ok) return { path: formatPath(path), message };
  const { offset: _offset, ...e } = place(read.source, { path, message });
  return e;
}

/** Formats an error for display: its message, then "(line 5, column 14)" when known. */
export function formatSpecError(e: SpecError): string {
  if (e.line === undefined) return e.message;
  return `${e.message} (line ${e.line}${e.col !== undefined ? `, column ${e.col}` : ''})`;
}
