/**
 * Size limits of an experiment, checked before anything proportional to them is allocated (the
 * parser's tree, the data arrays, the network's parameters and workspaces): a spec that would
 * exceed one is refused with a message naming the field, the size it asks for and the limit.
 * The notebook app takes them from its settings (schema/plugin.json); the CLI from
 * `--limit NAME=VALUE`. The defaults suit a proxy experiment that steps in a browser tab.
 */
import type { DataLimits } from '../core/data';
import { DEFAULT_LIMITS as DATA_DEFAULTS } from '../core/data';
import { DENSE_LIMIT as NEWTON_DENSE_LIMIT } from '../core/optim/newton';
import type { CheckProblem } from './checks';
import type { Path } from './path';

/** Limits of one experiment. */
export interface SpecLimits {
  /** Longest spec text, in characters (inline data counts; large data belongs in a file). */
  maxSpecChars: number;
  /** Most parameters (weights and biases) a network may have. */
  maxParameters: number;
  /** Most data rows, training and held-out each (inline or from a file). */
  maxRows: number;
  /** Most input columns. */
  maxColumns: number;
  /**
   * Most activations one evaluation holds: rows × the sum of all layers' units. The network keeps
   * a few workspaces of this size, so it bounds memory beside the parameters.
   */
  maxActivations: number;
  /** Largest data or weights file, in bytes. */
  maxFileBytes: number;
}

/** Default limits. */
export const DEFAULT_SPEC_LIMITS: Readonly<SpecLimits> = {
  maxSpecChars: 4_000_000,
  maxParameters: 2_000_000,
  maxRows: DATA_DEFAULTS.maxRows,
  maxColumns: DATA_DEFAULTS.maxColumns,
  maxActivations: 20_000_000,
  maxFileBytes: DATA_DEFAULTS.maxBytes
};

/** What each limit is called where a user sets it, for messages ("setting maxParameters"). */
export const LIMIT_NAMES: readonly (keyof SpecLimits)[] = ['maxSpecChars', 'maxParameters', 'maxRows', 'maxColumns', 'maxActivations', 'maxFileBytes'];

/** The data readers' limits that follow from the experiment's. */
export function dataLimits(l: SpecLimits): DataLimits {
  return { maxBytes: l.maxFileBytes, maxRows: l.maxRows, maxColumns: l.maxColumns, maxValues: Math.max(DATA_DEFAULTS.maxValues, l.maxRows * Math.min(l.maxColumns, 64)) };
}

/** `1 234 567` — big numbers readable in messages. */
export function grouped(n: number): string {
  return Number.isSafeInteger(n) ? n.toLocaleString('en-US').replace(/,/g, ' ') : n.toExponential(3);
}

type Obj = Record<string, unknown>;
const obj = (v: unknown): Obj | undefined => (typeof v === 'object' && v !== null && !Array.isArray(v) ? (v as Obj) : undefined);
const count = (v: unknown): number => (typeof v === 'number' && Number.isFinite(v) && v > 0 ? v : 0);

/**
 * Problems of a spec value (after the schema check) that would exceed `limits`: parameters,
 * inline rows and columns, activations. File data is checked again once its size is known
 * ({@link activationProblem}).
 */
export function limitProblems(spec: Obj, limits: SpecLimits): CheckProblem[] {
  const problems: CheckProblem[] = [];
  const model = obj(spec.model);
  const layers = Array.isArray(model?.layers) ? model.layers.map((l) => count(obj(l)?.units)) : [];
  const inputs = count(model?.inputs);
  if (inputs > limits.maxColumns) {
    problems.push({ path: ['model', 'inputs'], message: `model.inputs is ${grouped(inputs)}, above the limit of ${grouped(limits.maxColumns)} input columns (limit maxColumns)` });
  }
  let fanIn = inputs;
  let parameters = 0;
  let largest = -1;
  layers.forEach((units, i) => {
    parameters += (fanIn + 1) * units;
    if (largest < 0 || units > layers[largest]) largest = i;
    fanIn = units;
  });
  if (parameters > limits.maxParameters && largest >= 0) {
    problems.push({
      path: ['model', 'layers', largest, 'units'],
      message: `the network would have ${grouped(parameters)} parameters (model.layers[${largest}].units is ${grouped(layers[largest])}), above the limit of ${grouped(limits.maxParameters)} (limit maxParameters)`
    });
  }
  const optimizer = obj(spec.recipe)?.optimizer;
  if ((optimizer === 'newton' || optimizer === 'gauss-newton') && parameters > NEWTON_DENSE_LIMIT) {
    problems.push({
      path: ['recipe', 'optimizer'],
      message: `recipe.optimizer '${optimizer}' builds the dense ${grouped(parameters)} × ${grouped(parameters)} curvature matrix; it allows at most ${grouped(NEWTON_DENSE_LIMIT)} parameters, this network has ${grouped(parameters)}: use lbfgs or cg`
    });
  }
  const data = obj(spec.data);
  const rowsOf = (at: Path, d: Obj | undefined): number => {
    const x = d?.x;
    if (!Array.isArray(x)) return 0;
    if (x.length > limits.maxRows) problems.push({ path: [...at, 'x'], message: `${at.join('.')}.x has ${grouped(x.length)} rows, above the limit of ${grouped(limits.maxRows)} (limit maxRows)` });
    return x.length;
  };
  const rows = Math.max(rowsOf(['data'], data), rowsOf(['data', 'heldOut'], obj(data?.heldOut)));
  const p = activationProblem(rows, layers, limits, ['data', 'x']);
  if (p !== undefined && parameters <= limits.maxParameters) problems.push(p);
  return problems;
}

/** The problem when `rows` × Σ units exceeds the activation limit, or undefined. */
export function activationProblem(rows: number, units: readonly number[], limits: SpecLimits, at: Path): CheckProblem | undefined {
  const width = units.reduce((s, u) => s + u, 0);
  const activations = rows * width;
  if (activations <= limits.maxActivations) return undefined;
  return {
    path: [...at],
    message: `${grouped(rows)} rows through layers of ${grouped(width)} units in all need ${grouped(activations)} activations per evaluation, above the limit of ${grouped(limits.maxActivations)} (limit maxActivations): use fewer rows or smaller layers`
  };
}

/** Reads `NAME=VALUE` limit overrides (CLI `--limit`), each a positive integer. */
export function parseLimits(list: readonly string[], base: SpecLimits = DEFAULT_SPEC_LIMITS): { ok: true; limits: SpecLimits } | { ok: false; errors: string[] } {
  const limits: SpecLimits = { ...base };
  const errors: string[] = [];
  for (const item of list) {
    const eq = item.indexOf('=');
    const name = item.slice(0, Math.max(0, eq)) as keyof SpecLimits;
    const text = item.slice(eq + 1);
    if (eq <= 0 || !LIMIT_NAMES.includes(name)) {
      errors.push(`expected NAME=VALUE with NAME one of ${LIMIT_NAMES.join(', ')}, got ${JSON.stringify(item.slice(0, 60))}`);
      continue;
    }
    if (!/^\d+$/.test(text) || !Number.isSafeInteger(Number(text)) || Number(text) < 1) {
      errors.push(`${name} must be a positive integer in decimal digits, got ${JSON.stringify(text.slice(0, 40))}`);
      continue;
    }
    limits[name] = Number(text);
  }
  return errors.length > 0 ? { ok: false, errors } : { ok: true, limits };
}
