/**
 * Validates a spec value against `spec.schema.json` with ajv and rewords ajv's
 * errors into sentences a practitioner can act on, each with the path it concerns.
 */
import type { ErrorObject, ValidateFunction } from 'ajv';
import validateSpec from './spec-validator.generated';
import { closest, describe, formatPath, placeOf, subject } from './path';
import type { Path, PathSegment } from './path';

/** One reworded schema problem, before positions are attached. */
export interface SchemaProblem {
  path: Path;
  message: string;
  /** Point at the key rather than the value (unknown keys). */
  atKey: boolean;
}

/** A loose view of a JSON-schema node, enough to phrase its constraint. */
interface SchemaNode {
  type?: string | string[];
  enum?: unknown[];
  const?: unknown;
  anyOf?: SchemaNode[];
  minimum?: number;
  maximum?: number;
  exclusiveMinimum?: number;
  exclusiveMaximum?: number;
  properties?: Record<string, unknown>;
  required?: string[];
}

/**
 * The validator, precompiled from `spec.schema.json` by `src/validators/generate.mjs` (ajv's
 * standalone code): no code is generated from strings at run time.
 */
function validator(): ValidateFunction {
  return validateSpec as unknown as ValidateFunction;
}

/** Parses an ajv instancePath ("/model/layers/1/units") into a path. */
export function pathFromPointer(pointer: string): PathSegment[] {
  if (pointer === '') return [];
  return pointer
    .slice(1)
    .split('/')
    .map((s) => s.replace(/~1/g, '/').replace(/~0/g, '~'))
    .map((s) => (/^(0|[1-9]\d*)$/.test(s) ? Number(s) : s));
}

function quoteList(values: readonly unknown[]): string {
  return values.map((v) => (typeof v === 'string' ? v : JSON.stringify(v))).join(', ');
}

/** Phrases what a schema node accepts: "a positive integer", "one of sgd, adam", "'full' or a positive integer". */
export function phrase(s: SchemaNode): string {
  if (s.const !== undefined) return typeof s.const === 'string' ? `'${s.const}'` : JSON.stringify(s.const);
  if (s.enum) return s.enum.length === 1 ? quoteList(s.enum) : `one of ${quoteList(s.enum)}`;
  if (s.anyOf) return s.anyOf.map(phrase).join(' or ');
  const type = Array.isArray(s.type) ? s.type[0] : s.type;
  const lo = s.minimum;
  const hi = s.maximum;
  const xlo = s.exclusiveMinimum;
  const xhi = s.exclusiveMaximum;
  switch (type) {
    case 'integer':
      if (lo === 1 && hi === undefined) return 'a positive integer';
      if (lo === 0 && (hi === undefined || hi >= Number.MAX_SAFE_INTEGER)) return 'a non-negative integer';
      if (lo !== undefined && hi !== undefined) return `an integer from ${lo} to ${hi}`;
      return lo !== undefined ? `an integer of at least ${lo}` : 'an integer';
    case 'number': {
      if (xlo === 0 && hi === undefined && xhi === undefined) return 'a positive number';
      if (lo === 0 && hi === undefined && xhi === undefined) return 'a non-negative number';
      const left = lo !== undefined ? `[${lo}` : xlo !== undefined ? `(${xlo}` : undefined;
      const right = hi !== undefined ? `${hi}]` : xhi !== undefined ? `${xhi})` : undefined;
      if (left && right) return `a number in ${left}, ${right}`;
      if (left) return `a number ${lo !== undefined ? 'of at least' : 'above'} ${lo ?? xlo}`;
      if (right) return `a number ${hi !== undefined ? 'of at most' : 'below'} ${hi ?? xhi}`;
      return 'a finite number';
    }
    case 'array':
      return 'a list';
    case 'object': {
      if (!s.required || !s.properties) return 'a mapping';
      const optional = Object.keys(s.properties).filter((k) => !s.required?.includes(k));
      return `a mapping of ${s.required.join(', ')}${optional.length > 0 ? ` (optionally ${optional.join(', ')})` : ''}`;
    }
    case 'boolean':
      return 'true or false';
    case 'string':
      return 'a text';
    default:
      return 'valid';
  }
}

function reword(e: ErrorObject): SchemaProblem | undefined {
  const path = pathFromPointer(e.instancePath);
  const parent = (e.parentSchema ?? {}) as SchemaNode;
  const got = describe(e.data);
  switch (e.keyword) {
    case 'if':
      return undefined; // the failing branch reports its own errors
    case 'additionalProperties': {
      const key = String((e.params as { additionalProperty: string }).additionalProperty);
      const allowed = Object.keys(parent.properties ?? {});
      const guess = closest(key, allowed);
      const hint = guess ? ` (did you mean '${guess}'?)` : allowed.length > 0 ? ` (allowed: ${allowed.join(', ')})` : '';
      return { path: [...path, key], message: `unknown key '${key}' ${placeOf(path)}${hint}`, atKey: true };
    }
    case 'required': {
      const key = String((e.params as { missingProperty: string }).missingProperty);
      return { path, message: `${subject(path)} is missing the required key '${key}'`, atKey: true };
    }
    case 'enum': {
      const allowed = (e.schema as unknown[]) ?? [];
      const guess = typeof e.data === 'string' ? closest(e.data, allowed.map(String)) : undefined;
      const hint = guess ? ` (did you mean '${guess}'?)` : '';
      return { path, message: `${subject(path)} must be one of ${quoteList(allowed)}, got ${got}${hint}`, atKey: false };
    }
    case 'type':
      if ((parent.type === 'number' || parent.type === 'integer') && typeof e.data === 'number' && !Number.isFinite(e.data))
        return { path, message: `${subject(path)} must be a finite number, got ${got}`, atKey: false };
      return { path, message: `${subject(path)} must be ${phrase(parent)}, got ${got}`, atKey: false };
    case 'const':
    case 'minimum':
    case 'maximum':
    case 'exclusiveMinimum':
    case 'exclusiveMaximum':
    case 'anyOf':
    case 'oneOf': {
      // A misspelt name where one alternative is a list of names (an activation's): suggest the nearest.
      const names = (parent.anyOf ?? []).flatMap((a) => a.enum ?? []).map(String);
      const guess = typeof e.data === 'string' && names.length > 0 ? closest(e.data, names) : undefined;
      return { path, message: `${subject(path)} must be ${phrase(parent)}, got ${got}${guess ? ` (did you mean '${guess}'?)` : ''}`, atKey: false };
    }
    case 'pattern':
      // the schema's patterns: SHA-256 hex digests and relative file paths
      if ((e.params as { pattern: string }).pattern === '^[0-9a-f]{64}$') return { path, message: `${subject(path)} must be 64 lowercase hex digits (a SHA-256), got ${got}`, atKey: false };
      return { path, message: `${subject(path)} must be a path relative to the spec's folder (no leading /, drive letter or URL), got ${got}`, atKey: false };
    case 'minItems': {
      const n = (e.params as { limit: number }).limit;
      return { path, message: `${subject(path)} must have at least ${n} ${n === 1 ? 'entry' : 'entries'}, got ${got}`, atKey: false };
    }
    case 'maxItems': {
      const n = (e.params as { limit: number }).limit;
      return { path, message: `${subject(path)} must have at most ${n} ${n === 1 ? 'entry' : 'entries'}, got ${got}`, atKey: false };
    }
    default:
      return { path, message: `${subject(path)} ${e.message ?? 'is invalid'}`, atKey: false };
  }
}

/**
 * Validates `value` against the spec schema and returns every problem, reworded.
 * Errors inside a failed `anyOf` are folded into one sentence about the alternatives.
 */
export function checkSchema(value: unknown): SchemaProblem[] {
  const validate = validator();
  if (validate(value)) return [];
  const errors = validate.errors ?? [];
  const folded = errors.filter((e) => e.keyword === 'anyOf' || e.keyword === 'oneOf').map((e) => `${e.schemaPath}/`);
  const out: SchemaProblem[] = [];
  const seen = new Set<string>();
  for (const e of errors) {
    if (folded.some((prefix) => e.schemaPath.startsWith(prefix))) continue;
    const p = reword(e);
    if (!p) continue;
    const key = `${formatPath(p.path)}\u0000${p.message}`;
    if (seen.has(key)) continue;
    seen.add(key);
    out.push(p);
  }
  return out;
}
