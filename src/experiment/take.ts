/**
 * Data taken from a running Python kernel into a stepwell cell, as pure functions: the Python
 * expression that reads one named array (sent as a `user_expressions` entry of an
 * execute request), the reading of its reply with exact, actionable errors, the content
 * hash of the taken values, and the spec text of a new cell holding them inline.
 *
 * The hash is SHA-256 (FIPS 180-4, via `@noble/hashes`) of the values as little-endian
 * float64 in row-major order, the arrays one after the other in the order x, y, heldOut.x,
 * heldOut.y. In NumPy: `hashlib.sha256(b"".join(np.asarray(a, "<f8").tobytes() for a in
 * arrays)).hexdigest()`.
 */
import { sha256 } from '@noble/hashes/sha256';
import { bytesToHex } from '@noble/hashes/utils';
import type { CheckProblem } from './checks';
import { writeNpy } from '../core/data/npy';

/** The roles an array can take in a spec's `data`. */
export type TakeRole = 'x' | 'y' | 'heldOut.x' | 'heldOut.y';

/** Roles in the order they are stored and hashed. */
export const TAKE_ROLES: readonly TakeRole[] = ['x', 'y', 'heldOut.x', 'heldOut.y'];

/** One array as the kernel sent it: its name there, shape, dtype and row-major values. */
export interface TakenArray {
  role: TakeRole;
  name: string;
  shape: number[];
  dtype: string;
  values: Float64Array;
}

/** A reply that cannot be used, with the sentence to show. */
export interface TakeProblem {
  role: TakeRole;
  name: string;
  message: string;
}

/** A Python name, optionally with attributes (`X_train`, `data.features`). */
const NAME = /^[A-Za-z_][A-Za-z0-9_]*(\.[A-Za-z_][A-Za-z0-9_]*)*$/;

/** Checks a name typed by the user; returns the problem or null. */
export function checkName(role: TakeRole, name: string): TakeProblem | null {
  if (NAME.test(name)) return null;
  const shown = JSON.stringify(name.length > 40 ? `${name.slice(0, 40)}…` : name);
  return { role, name, message: `${role}: ${shown} is not a Python variable name (letters, digits and _, optionally with .attribute)` };
}

/**
 * The Python expression that reads `name` in the kernel: a base64 string of JSON with the
 * shape and dtype, and the values only when the array is real-valued, finite and holds at most
 * `limit` numbers (checked in the kernel, before anything is converted or sent). NaN never
 * reaches JSON: non-finite arrays are reported by the index of their first bad value.
 */
export function arrayExpression(name: string, limit: number): string {
  if (!NAME.test(name)) throw new Error(`not a Python variable name: ${JSON.stringify(name)}`);
  if (!Number.isInteger(limit) || limit < 1) throw new Error(`the size limit must be a positive integer, got ${limit}`);
  return [
    '(lambda np, json, b64, limit: (lambda a: b64.b64encode(json.dumps(',
    '{"error": "dtype", "shape": list(a.shape), "dtype": str(a.dtype)} if a.dtype.kind not in "biuf" else ',
    '{"error": "size", "shape": list(a.shape), "dtype": str(a.dtype), "size": int(a.size)} if a.size > limit else ',
    '(lambda f: {"shape": list(a.shape), "dtype": str(a.dtype), "values": f.tolist()} if bool(np.isfinite(f).all()) else ',
    '{"error": "nonfinite", "shape": list(a.shape), "dtype": str(a.dtype), "count": int((~np.isfinite(f)).sum()), "first": int(np.flatnonzero(~np.isfinite(f))[0])})',
    '(np.ascontiguousarray(a, dtype="<f8").ravel())',
    ').encode()).decode())(np.asarray(',
    name,
    ')))(__import__("numpy"), __import__("json"), __import__("base64"), ',
    String(limit),
    ')'
  ].join('');
}

/** The `user_expressions` entry of an execute reply (the parts we read). */
export interface ExpressionReply {
  status?: string;
  data?: Record<string, unknown>;
  ename?: string;
  evalue?: string;
}

const shapeText = (shape: number[]): string => (shape.length === 0 ? 'a scalar' : shape.join(' × '));

/** Decodes base64 (the kernel's text/plain is the repr of a base64 string). */
function fromBase64(text: string): string {
  const binary = atob(text);
  const bytes = new Uint8Array(binary.length);
  for (let i = 0; i < binary.length; i++) bytes[i] = binary.charCodeAt(i);
  return new TextDecoder().decode(bytes);
}

/**
 * Reads one reply of {@link arrayExpression}. Every failure becomes a sentence that names the
 * role, the kernel name and what to do: missing name, not numbers, ragged rows, NaN or ±∞,
 * more than `limit` numbers, more than two dimensions, a broken reply.
 */
export function readArrayReply(role: TakeRole, name: string, reply: ExpressionReply | undefined, limit: number): TakenArray | TakeProblem {
  const fail = (message: string): TakeProblem => ({ role, name, message: `${role} ← ${name}: ${message}` });
  if (reply === undefined) return fail('the kernel sent no answer for this name');
  if (reply.status !== 'ok') {
    const ename = reply.ename ?? 'error';
    const evalue = (reply.evalue ?? '').split('\n')[0];
    if (ename === 'NameError') return fail(`no variable named ${name} in the kernel (run the cell that defines it first)`);
    if (ename === 'AttributeError') return fail(`the kernel says ${evalue}`);
    if (ename === 'ModuleNotFoundError' || ename === 'ImportError') return fail(`NumPy is not installed in the kernel (${evalue}); install numpy there`);
    if (ename === 'ValueError' && /inhomogeneous|sequence/.test(evalue)) return fail(`ragged: its rows do not all have the same length (${evalue})`);
    return fail(`the kernel could not read it as an array: ${ename}: ${evalue}`);
  }
  const plain = reply.data?.['text/plain'];
  const quoted = typeof plain === 'string' ? /^'([A-Za-z0-9+/=]*)'$/.exec(plain.trim()) : null;
  if (quoted === null) return fail('the kernel answered in an unexpected form (is it a Python kernel with NumPy?)');
  let body: { error?: string; shape?: number[]; dtype?: string; size?: number; count?: number; first?: number; values?: number[] };
  try {
    body = JSON.parse(fromBase64(quoted[1])) as typeof body;
  } catch (err) {
    return fail(`the kernel's answer is not readable (${err instanceof Error ? err.message : String(err)})`);
  }
  const shape = Array.isArray(body.shape) ? body.shape : [];
  const dtype = typeof body.dtype === 'string' ? body.dtype : '?';
  switch (body.error) {
    case 'dtype':
      return fail(
        dtype === 'object'
          ? `holds Python objects, not numbers (dtype object: ragged rows or mixed types?) — convert it to a float array`
          : dtype.startsWith('complex')
            ? `holds complex numbers (${dtype}); Stepwell takes real values only`
            : `holds ${dtype} values, not numbers — convert it to a float array`
      );
    case 'size':
      return fail(`${shape.length > 1 ? `${shapeText(shape)} = ` : ''}${body.size} numbers, above the limit of ${limit} (setting "Largest array taken from the kernel"); take a sample of rows`);
    case 'nonfinite':
      return fail(`${body.count} of its values are NaN or ±∞ (the first at flat index ${body.first}); drop or fill them first`);
    case undefined:
      break;
    default:
      return fail(`the kernel reported ${String(body.error)}`);
  }
  if (!Array.isArray(body.values) || body.values.length !== shape.reduce((a, b) => a * b, 1)) {
    return fail('the kernel sent a number of values that does not match its shape');
  }
  if (shape.length === 0) return fail('is a single number; a data array needs one row per example');
  if (shape.length > 2) return fail(`has ${shape.length} dimensions (${shapeText(shape)}); a data array has rows and at most columns (reshape it to 2-D)`);
  if (shape[0] === 0) return fail('has no rows');
  return { role, name, shape, dtype, values: Float64Array.from(body.values) };
}

/** The content hash of taken arrays (see the module comment for its exact definition). */
export function takenHash(arrays: readonly Float64Array[]): string {
  const h = sha256.create();
  for (const a of arrays) {
    const bytes = new Uint8Array(a.length * 8);
    const view = new DataView(bytes.buffer);
    for (let i = 0; i < a.length; i++) view.setFloat64(i * 8, a[i], true);
    h.update(bytes);
  }
  return bytesToHex(h.digest());
}

/** Problems of a whole set: required roles present, one array per role, row counts and widths that agree. */
export function checkTakenSet(arrays: readonly TakenArray[]): string[] {
  const problems: string[] = [];
  const by = new Map(arrays.map(a => [a.role, a]));
  for (const role of ['x', 'y'] as const) if (!by.has(role)) problems.push(`${role} is required`);
  if (by.has('heldOut.x') !== by.has('heldOut.y')) problems.push('heldOut.x and heldOut.y go together: give both or neither');
  const width = (a: TakenArray): number => (a.shape.length === 1 ? 1 : a.shape[1]);
  for (const [xr, yr] of [['x', 'y'], ['heldOut.x', 'heldOut.y']] as const) {
    const x = by.get(xr);
    const y = by.get(yr);
    if (x && y && x.shape[0] !== y.shape[0]) problems.push(`${xr} has ${x.shape[0]} rows but ${yr} has ${y.shape[0]}: they must match`);
  }
  for (const [main, held] of [['x', 'heldOut.x'], ['y', 'heldOut.y']] as const) {
    const a = by.get(main);
    const b = by.get(held);
    if (a && b && width(a) !== width(b)) problems.push(`${held} has ${width(b)} columns but ${main} has ${width(a)}: they must match`);
  }
  return problems;
}

/** One line describing a taken array: `x ← X_train (60 × 2, float64)`. */
export function describeTaken(a: TakenArray): string {
  return `${a.role} ← ${a.name} (${shapeText(a.shape)}, ${a.dtype})`;
}

/** A number as YAML text that reads back as the same float64 (JavaScript's shortest round-trip form). */
const num = (v: number): string => (Object.is(v, -0) ? '-0.0' : String(v));

/** Values per line of a one-column list. */
const PER_LINE = 6;

function rowsYaml(a: TakenArray, indent: string): string {
  if (a.shape.length === 1) {
    const parts: string[] = [];
    for (let i = 0; i < a.values.length; i += PER_LINE) parts.push(Array.from(a.values.subarray(i, i + PER_LINE), num).join(', '));
    return `[${parts.join(`,\n${indent}  `)}]`;
  }
  const cols = a.shape[1];
  const lines: string[] = [];
  for (let r = 0; r < a.shape[0]; r++) lines.push(`${indent}- [${Array.from(a.values.subarray(r * cols, (r + 1) * cols), num).join(', ')}]`);
  return `\n${lines.join('\n')}`;
}

/** Where the taken values go in the new cell's `data`: inline YAML, or `.npy` files beside the notebook. */
export type TakenData = { kind: 'inline' } | { kind: 'files'; names: ReadonlyMap<TakeRole, string> };

/**
 * The text of a new stepwell cell holding taken arrays: the magic line, a comment with names and
 * shapes, a small tanh regression net sized to the data (inputs = x's columns, outputs = y's
 * columns), the data — inline with `from` (kernel names and content hash), or naming the `.npy`
 * files they were saved to (`where.names`, with the same hash in a comment) — loss and recipe.
 */
export function takenSpecText(arrays: readonly TakenArray[], takenAt: string, where: TakenData = { kind: 'inline' }): string {
  const by = new Map(arrays.map(a => [a.role, a]));
  const x = by.get('x');
  const y = by.get('y');
  if (!x || !y) throw new Error('takenSpecText needs x and y');
  const ordered = TAKE_ROLES.map(r => by.get(r)).filter((a): a is TakenArray => a !== undefined);
  const inputs = x.shape.length === 1 ? 1 : x.shape[1];
  const outputs = y.shape.length === 1 ? 1 : y.shape[1];
  const kernel = ordered.map(a => `${JSON.stringify(a.role)}: ${JSON.stringify(a.name)}`).join(', ');
  const held = by.get('heldOut.x');
  const heldY = by.get('heldOut.y');
  const hash = takenHash(ordered.map(a => a.values));
  let data: string[];
  if (where.kind === 'inline') {
    data = [
      '  # Names in the kernel and the SHA-256 of the values below (little-endian float64, row-major, in this order).',
      `  from: { kernel: { ${kernel} }, sha256: ${hash} }`,
      `  x: ${rowsYaml(x, '    ')}`,
      `  y: ${rowsYaml(y, '    ')}`,
      ...(held && heldY ? ['  heldOut:', `    x: ${rowsYaml(held, '      ')}`, `    y: ${rowsYaml(heldY, '      ')}`] : [])
    ];
  } else {
    const file = (role: TakeRole): string => {
      const n = where.names.get(role);
      if (n === undefined) throw new Error(`takenSpecText: no file name for ${role}`);
      return JSON.stringify(n);
    };
    data = [
      `  # Saved from the kernel (${kernel.replace(/"/g, '')}) as .npy files beside the notebook;`,
      `  # SHA-256 of their values (little-endian float64, row-major, in this order): ${hash}`,
      `  file: ${file('x')}`,
      `  targetFile: ${file('y')}`,
      ...(held && heldY ? [`  heldOut: { file: ${file('heldOut.x')}, targetFile: ${file('heldOut.y')} }`] : [])
    ];
  }
  return [
    '%%stepwell',
    `# A stepwell experiment on data taken from the kernel on ${takenAt}:`,
    ...ordered.map(a => `#   ${describeTaken(a)}`),
    '# What a small model shows here is evidence about this model, not a guarantee at scale.',
    'seed: 7',
    'model:',
    `  inputs: ${inputs}`,
    '  layers:',
    '    - { units: 8, activation: tanh }',
    `    - { units: ${outputs}, activation: linear }`,
    '  init: lecun-normal',
    'data:',
    ...data,
    'loss: mse                   # mse | cross-entropy (class indices in y) | binary-cross-entropy (0/1 targets)',
    'regularization: { l2: 0 }',
    'recipe: { optimizer: sgd, lr: 0.05, momentum: 0, batch: full }',
    ''
  ].join('\n');
}

/**
 * File names for taken arrays saved beside the notebook: the kernel name with anything but
 * letters, digits, `-` and `_` turned into `_`, then `.npy`; `-2`, `-3`, … when `exists` says
 * the name is taken (by a file already there or by an earlier array of the same set).
 */
export function takenFileNames(arrays: readonly TakenArray[], exists: (name: string) => boolean): Map<TakeRole, string> {
  const out = new Map<TakeRole, string>();
  const used = new Set<string>();
  for (const a of arrays) {
    const stem = a.name.replace(/[^A-Za-z0-9_-]/g, '_');
    let name = `${stem}.npy`;
    for (let i = 2; exists(name) || used.has(name); i++) name = `${stem}-${i}.npy`;
    used.add(name);
    out.set(a.role, name);
  }
  return out;
}

/** A taken array as the bytes of a `.npy` file (format 1.0, `<f8`, C order; NumPy reads it back exactly). */
export function takenNpy(a: TakenArray): Uint8Array {
  return writeNpy(a.values, a.shape);
}

type Obj = Record<string, unknown>;
const isObj = (v: unknown): v is Obj => typeof v === 'object' && v !== null && !Array.isArray(v);

/** Row-major values of a matrix or a list of numbers/rows as written in a spec, or null if it is not one. */
function flatValues(v: unknown): number[] | null {
  if (!Array.isArray(v)) return null;
  const out: number[] = [];
  for (const item of v) {
    if (typeof item === 'number') out.push(item);
    else if (Array.isArray(item) && item.every((e): e is number => typeof e === 'number')) out.push(...item);
    else return null;
  }
  return out;
}

/**
 * When the spec's data say where they were taken from (`data.from.sha256`), checks that the
 * inline values still have that hash. A mismatch is a warning at `data.from.sha256` naming the
 * hash of the values as they are now: the data were edited after they were taken.
 */
export function checkTakenData(spec: unknown): CheckProblem | null {
  if (!isObj(spec) || !isObj(spec.data) || !isObj(spec.data.from) || typeof spec.data.from.sha256 !== 'string') return null;
  const data = spec.data;
  const held = isObj(data.heldOut) ? data.heldOut : {};
  const parts = [data.x, data.y, ...(isObj(data.heldOut) ? [held.x, held.y] : [])].map(flatValues);
  if (parts.some(p => p === null)) return null; // the schema reports malformed data
  const now = takenHash(parts.map(p => Float64Array.from(p as number[])));
  if (now === spec.data.from.sha256) return null;
  return {
    path: ['data', 'from', 'sha256'],
    message: `data.from.sha256 does not match the values in data (their SHA-256 is now ${now.slice(0, 16)}…): they were changed after they were taken from the kernel`
  };
}
