/**
 * Spec patches: the one way a change to an experiment is written down — by `stepwell run --set`
 * and `--branch`, by a finding's proposal, by the cell's branch form, and in the ledger.
 *
 * A patch is a flat mapping from keys to values. A key is a path into the spec: a bare recipe key
 * (`lr`, `momentum`, `schedule`), `layers[i].lrScale` (the recipe's per-layer multipliers), or a
 * path from the top (`model.init`, `model.gain`, `data.standardize`, `recipe.lr`, `seed`). A patch
 * is applied to the spec's plain value and the result is validated exactly like a spec, so a bad
 * value gets the same message a bad spec would, naming the key that was patched.
 *
 * Keys outside `recipe` change the setup (what is optimized) or the seed; a branch with such a
 * patch starts afresh at step 0 instead of carrying the parent's weights ({@link touchesSetup}).
 */
import { parse as parseYaml, parseDocument, isMap, isScalar, stringify as stringifyYaml } from 'yaml';
import specSchema from './spec.schema.json';
import { closest, formatPath, type Path, type PathSegment } from './path';
import { parseSpecValue, readSpecValue, type SpecError, type SpecOptions, type SpecResult } from './index';
import { positionAt } from './source';
import { specFileNames } from './files';

/** A JSON value a patch may set. */
export type PatchValue = string | number | boolean | null | PatchValue[] | { [key: string]: PatchValue };

/** A flat patch: key (see the module comment) → new value. */
export type SpecPatch = Readonly<Record<string, PatchValue>>;

/** Top-level keys of a spec. */
const TOP_KEYS = Object.keys((specSchema as { properties: Record<string, unknown> }).properties);
/** Keys of the recipe mapping (bare keys resolve to these). */
const RECIPE_KEYS = Object.keys((specSchema as { definitions: { recipe: { properties: Record<string, unknown> } } }).definitions.recipe.properties);
/** Names that would reach an object's prototype instead of a key. */
const FORBIDDEN = new Set(['__proto__', 'constructor', 'prototype']);
/** Longest value text echoed back in a message. */
const ECHO = 60;

const KEY_SHAPE = /^[A-Za-z_][A-Za-z0-9_]*(\[\d+\])*(\.[A-Za-z_][A-Za-z0-9_]*(\[\d+\])*)*$/;

/** Text shortened for messages (control characters shown as escapes). */
function echo(text: string): string {
  const shown = JSON.stringify(text.length > ECHO ? `${text.slice(0, ECHO)}…` : text);
  return text.length > ECHO ? `${shown} (${text.length} characters)` : shown;
}

/** The spec path a patch key stands for, or a message saying why the key is not one. */
export function patchPath(key: string): { ok: true; path: Path } | { ok: false; message: string } {
  if (!KEY_SHAPE.test(key)) {
    return { ok: false, message: `${echo(key)} is not a key: use a recipe key (lr), layers[i].lrScale, or a path from the top such as model.init` };
  }
  const path: PathSegment[] = [];
  for (const part of key.split('.')) {
    const name = part.replace(/\[.*$/, '');
    if (FORBIDDEN.has(name)) return { ok: false, message: `${echo(key)} names '${name}', which is not a spec key` };
    path.push(name);
    for (const m of part.matchAll(/\[(\d+)\]/g)) path.push(Number(m[1]));
  }
  const head = path[0] as string;
  if (TOP_KEYS.includes(head)) return { ok: true, path };
  if (RECIPE_KEYS.includes(head)) return { ok: true, path: ['recipe', ...path] };
  const guess = closest(head, [...RECIPE_KEYS, ...TOP_KEYS]);
  return {
    ok: false,
    message: `unknown key ${echo(key)}: use a recipe key (${RECIPE_KEYS.slice(0, 4).join(', ')}, …), layers[i].lrScale, or a path from the top (model.init, data.standardize)${guess ? `; did you mean '${guess}'?` : ''}`
  };
}

/** True when the patch changes more than the recipe (the setup or the seed): such a branch starts at step 0. */
export function touchesSetup(patch: SpecPatch): boolean {
  return Object.keys(patch).some((k) => {
    const p = patchPath(k);
    return !p.ok || p.path[0] !== 'recipe';
  });
}

/** `lr=0.05, model.init=he-normal` — a patch in the form `--set` takes. */
export function describePatch(patch: SpecPatch): string {
  return Object.entries(patch)
    .map(([k, v]) => `${k}=${typeof v === 'string' ? v : JSON.stringify(v)}`)
    .join(', ');
}

/** Reads one `VALUE` of `KEY=VALUE` as a YAML scalar or flow collection (`0.05`, `full`, `{kind: cosine, steps: 100}`). */
function readValue(text: string): { ok: true; value: PatchValue } | { ok: false; message: string } {
  try {
    const v = parseYaml(text, { maxAliasCount: 16, uniqueKeys: true }) as unknown;
    return { ok: true, value: (v === undefined ? null : v) as PatchValue };
  } catch (e) {
    return { ok: false, message: `cannot read the value ${echo(text)}: ${(e as Error).message.split('\n')[0]}` };
  }
}

/**
 * Parses `KEY=VALUE` assignments (CLI `--set`, the parts of `--branch`) into a patch.
 *
 * @returns the patch, or one message per bad assignment.
 */
export function parseAssignments(list: readonly string[]): { ok: true; patch: SpecPatch } | { ok: false; errors: string[] } {
  const patch: Record<string, PatchValue> = Object.create(null) as Record<string, PatchValue>;
  const errors: string[] = [];
  for (const item of list) {
    const eq = item.indexOf('=');
    if (eq <= 0) {
      errors.push(`expected KEY=VALUE, got ${echo(item)}`);
      continue;
    }
    const key = item.slice(0, eq).trim();
    const path = patchPath(key);
    if (!path.ok) {
      errors.push(path.message);
      continue;
    }
    const value = readValue(item.slice(eq + 1));
    if (!value.ok) errors.push(`${key}: ${value.message}`);
    else patch[key] = value.value;
  }
  return errors.length > 0 ? { ok: false, errors } : { ok: true, patch: { ...patch } };
}

/**
 * Splits `KEY=VALUE,KEY=VALUE` at the commas that are not inside brackets, braces or quotes
 * (so `schedule={kind: cosine, steps: 100}` stays whole).
 */
export function splitAssignments(text: string): string[] {
  const out: string[] = [];
  let depth = 0;
  let quote: string | null = null;
  let start = 0;
  for (let i = 0; i < text.length; i++) {
    const c = text[i];
    if (quote !== null) {
      if (c === quote) quote = null;
    } else if (c === '"' || c === "'") quote = c;
    else if (c === '{' || c === '[') depth++;
    else if (c === '}' || c === ']') depth = Math.max(0, depth - 1);
    else if (c === ',' && depth === 0) {
      out.push(text.slice(start, i));
      start = i + 1;
    }
  }
  out.push(text.slice(start));
  return out.map((s) => s.trim()).filter((s) => s !== '');
}

/**
 * Parses patch text written as a YAML mapping of keys to values (the cell's branch form):
 * `lr: 0.05` on one line, `model.init: he-normal` on the next. Problems carry line and column.
 */
export function parsePatchText(text: string): { ok: true; patch: SpecPatch } | { ok: false; errors: SpecError[] } {
  const doc = parseDocument(text, { uniqueKeys: true, prettyErrors: false });
  const at = (offset: number | undefined): { line?: number; col?: number } => {
    if (offset === undefined) return {};
    const p = positionAt(text, offset);
    return { line: p.line, col: p.col };
  };
  if (doc.errors.length > 0) {
    return { ok: false, errors: doc.errors.map((e) => ({ path: '', message: e.message.split('\n')[0].replace(/ at line \d+, column \d+:?\s*$/, ''), ...at(e.pos[0]) })) };
  }
  if (doc.contents === null) return { ok: false, errors: [{ path: '', message: 'the patch is empty: write one key per line, e.g. lr: 0.05' }] };
  if (!isMap(doc.contents)) return { ok: false, errors: [{ path: '', message: 'the patch must be a mapping of keys to values, e.g. lr: 0.05', ...at(doc.contents.range?.[0]) }] };
  let values: Record<string, unknown>;
  try {
    values = doc.toJS({ maxAliasCount: 16 }) as Record<string, unknown>;
  } catch (e) {
    return { ok: false, errors: [{ path: '', message: `the patch cannot be read: ${(e as Error).message.split('\n')[0]}` }] };
  }
  const errors: SpecError[] = [];
  const patch: Record<string, PatchValue> = Object.create(null) as Record<string, PatchValue>;
  for (const pair of doc.contents.items) {
    const keyNode = pair.key;
    const key = isScalar(keyNode) ? String(keyNode.value) : '';
    const where = at(isScalar(keyNode) ? keyNode.range?.[0] : undefined);
    const path = patchPath(key);
    if (!path.ok) {
      errors.push({ path: key, message: path.message, ...where });
      continue;
    }
    const value = Object.prototype.hasOwnProperty.call(values, key) ? values[key] : null;
    patch[key] = (value === undefined ? null : value) as PatchValue;
  }
  return errors.length > 0 ? { ok: false, errors } : { ok: true, patch: { ...patch } };
}

const isMapping = (v: unknown): v is Record<string, unknown> => typeof v === 'object' && v !== null && !Array.isArray(v);

/**
 * Applies a patch to a plain spec value (which is not modified). Missing mappings on the way are
 * created; `recipe.layers` is created with `lrScale: 1` per model layer when a key needs it.
 *
 * @returns the patched copy, or one error per key that cannot be placed.
 */
export function applyPatch(spec: unknown, patch: SpecPatch): { ok: true; value: Record<string, unknown> } | { ok: false; errors: SpecError[] } {
  if (!isMapping(spec)) return { ok: false, errors: [{ path: '', message: 'the spec must be a mapping before a patch can be applied' }] };
  const root = structuredClone(spec) as Record<string, unknown>;
  const errors: SpecError[] = [];
  for (const [key, value] of Object.entries(patch)) {
    const resolved = patchPath(key);
    if (!resolved.ok) {
      errors.push({ path: key, message: resolved.message });
      continue;
    }
    const path = resolved.path;
    let node: unknown = root;
    let failed = false;
    for (let i = 0; i < path.length - 1 && !failed; i++) {
      const seg = path[i];
      const next = path[i + 1];
      const container = node as Record<string, unknown> | unknown[];
      let child = (container as Record<string | number, unknown>)[seg];
      if (child === undefined) {
        if (typeof next === 'number') {
          const layers = isMapping(root.model) && Array.isArray(root.model.layers) ? root.model.layers.length : 0;
          if (formatPath(path.slice(0, i + 1)) === 'recipe.layers' && layers > 0) child = Array.from({ length: layers }, () => ({ lrScale: 1 }));
          else {
            errors.push({ path: key, message: `${key}: the spec has no list at ${formatPath(path.slice(0, i + 1))}` });
            failed = true;
            break;
          }
        } else child = {};
        (container as Record<string | number, unknown>)[seg] = child;
      }
      if (typeof next === 'number' ? !Array.isArray(child) : !isMapping(child)) {
        errors.push({ path: key, message: `${key}: ${formatPath(path.slice(0, i + 1))} is not a ${typeof next === 'number' ? 'list' : 'mapping'} in the spec` });
        failed = true;
        break;
      }
      if (typeof next === 'number' && next >= (child as unknown[]).length) {
        errors.push({ path: key, message: `${key}: ${formatPath(path.slice(0, i + 1))} has ${(child as unknown[]).length} entries, so index ${next} does not exist` });
        failed = true;
        break;
      }
      node = child;
    }
    if (!failed) (node as Record<string | number, unknown>)[path[path.length - 1]] = structuredClone(value);
  }
  return errors.length > 0 ? { ok: false, errors } : { ok: true, value: root };
}

/**
 * The experiment of `specText` with `patch` applied, validated like a spec. Problems of the text
 * itself keep their line and column; problems the patch introduces name the patched key.
 */
export function patchExperiment(specText: string, patch: SpecPatch, options: SpecOptions = {}): SpecResult {
  const read = readSpecValue(specText);
  if (!read.ok) return read;
  const applied = applyPatch(read.value, patch);
  if (!applied.ok) return applied;
  const result = parseSpecValue(applied.value, options);
  if (result.ok) return result;
  const keys = Object.keys(patch).map((k) => {
    const p = patchPath(k);
    return { key: k, at: p.ok ? formatPath(p.path) : k };
  });
  return {
    ok: false,
    errors: result.errors.map((e) => {
      const by = keys.find((k) => e.path === k.at || e.path.startsWith(`${k.at}.`) || e.path.startsWith(`${k.at}[`));
      return by ? { ...e, message: `patch '${by.key}': ${e.message}` } : e;
    })
  };
}

/**
 * Applies patches one after another (a branch's ancestry: the root's first, the branch's own
 * last), so a later key wins over an earlier one for the same spec path.
 */
export function applyPatches(spec: unknown, patches: readonly SpecPatch[]): { ok: true; value: Record<string, unknown> } | { ok: false; errors: SpecError[] } {
  let value: unknown = spec;
  for (const p of patches) {
    const r = applyPatch(value, p);
    if (!r.ok) return r;
    value = r.value;
  }
  if (patches.length > 0) return { ok: true, value: value as Record<string, unknown> };
  return isMapping(spec) ? { ok: true, value: structuredClone(spec) } : { ok: false, errors: [{ path: '', message: 'the spec must be a mapping before a patch can be applied' }] };
}

/**
 * The experiment of a branch: `specText` with its ancestry's patches applied in order, validated
 * like a spec (problems a patch introduces name the patched key, as {@link patchExperiment} does).
 * `options.files` holds the bytes of the files the patched spec names.
 */
export function patchChainExperiment(specText: string, patches: readonly SpecPatch[], options: SpecOptions = {}): SpecResult {
  if (patches.length === 0) return patchExperiment(specText, {}, options);
  const read = readSpecValue(specText);
  if (!read.ok) return read;
  const before = applyPatches(read.value, patches.slice(0, -1));
  if (!before.ok) return before;
  // The last patch is checked by patchExperiment's rules against the earlier ones already applied.
  const applied = applyPatch(before.value, patches[patches.length - 1]);
  if (!applied.ok) return applied;
  const result = parseSpecValue(applied.value, options);
  if (result.ok) return result;
  const merged: Record<string, PatchValue> = {};
  for (const p of patches) Object.assign(merged, p);
  return { ok: false, errors: result.errors.map((e) => namePatchedKey(e, merged)) };
}

/** A spec problem whose path a patch key set, with the key named (`patch 'lr': …`). */
function namePatchedKey(e: SpecError, patch: SpecPatch): SpecError {
  for (const k of Object.keys(patch)) {
    const p = patchPath(k);
    const at = p.ok ? formatPath(p.path) : k;
    if (e.path === at || e.path.startsWith(`${at}.`) || e.path.startsWith(`${at}[`)) return { ...e, message: `patch '${k}': ${e.message}` };
  }
  return e;
}

/**
 * The part of a branch's spec a colleague needs to reproduce its recipe: `seed`, the whole
 * `recipe` mapping as the patched spec has it, and every other spec path the patches set
 * (e.g. `model.init`), as YAML text. Values the spec leaves to defaults stay unwritten.
 */
export function recipeExcerpt(specText: string, patches: readonly SpecPatch[]): { ok: true; yaml: string } | { ok: false; errors: SpecError[] } {
  const read = readSpecValue(specText);
  if (!read.ok) return read;
  const applied = applyPatches(read.value, patches);
  if (!applied.ok) return applied;
  const spec = applied.value;
  const out: Record<string, unknown> = {};
  if (spec.seed !== undefined) out.seed = spec.seed;
  for (const p of patches) {
    for (const k of Object.keys(p)) {
      const path = patchPath(k);
      if (!path.ok || path.path[0] === 'recipe' || path.path[0] === 'seed') continue;
      // Copy the patched leaf, or the whole list when the path goes through one (model.layers[1]…).
      const cut = path.path.findIndex((seg) => typeof seg === 'number');
      const keys = (cut < 0 ? path.path : path.path.slice(0, cut)) as string[];
      let src: unknown = spec;
      let dst = out;
      keys.forEach((seg, i) => {
        src = isMapping(src) ? src[seg] : undefined;
        if (i === keys.length - 1) dst[seg] = structuredClone(src);
        else {
          if (!isMapping(dst[seg])) dst[seg] = {};
          dst = dst[seg] as Record<string, unknown>;
        }
      });
    }
  }
  out.recipe = spec.recipe ?? {};
  return { ok: true, yaml: stringifyYaml(out, { lineWidth: 0 }) };
}

/**
 * Checks the text of the cell's branch form: a YAML mapping of keys (see {@link parsePatchText})
 * applied after the branch's ancestry and validated like a spec. Every problem carries the line
 * and column of its key in the patch text (the spec's own problems, which a patch cannot fix,
 * are reported without a position).
 */
export function checkPatchText(specText: string, ancestry: readonly SpecPatch[], text: string): { ok: true; patch: SpecPatch } | { ok: false; errors: SpecError[] } {
  const parsed = parsePatchText(text);
  if (!parsed.ok) return parsed;
  const result = patchChainExperiment(specText, [...ancestry, parsed.patch]);
  if (result.ok) return { ok: true, patch: parsed.patch };
  const doc = parseDocument(text);
  const where = new Map<string, { line: number; col: number }>();
  if (isMap(doc.contents)) {
    for (const pair of doc.contents.items) {
      if (isScalar(pair.key) && pair.key.range) where.set(String(pair.key.value), positionAt(text, pair.key.range[0]));
    }
  }
  return {
    ok: false,
    errors: result.errors.map((e) => {
      const key = /^patch '([^']+)': /.exec(e.message)?.[1];
      const pos = key === undefined ? undefined : where.get(key);
      return pos ? { path: key as string, message: e.message, line: pos.line, col: pos.col } : { path: e.path, message: e.message };
    })
  };
}

/**
 * The distinct file names the cell's spec text names, as written and under every branch's patch
 * chain (root first): what a caller reads before handing the bytes to `parseSpec`. Text that does
 * not parse, or a chain that does not apply, names nothing (its own parse reports why).
 */
export function cellFileNames(specText: string, chains: readonly (readonly SpecPatch[])[] = []): string[] {
  // Every key that names a file has "file" in its name; text without it (and without an escape
  // that could spell it) names none, so 10⁵ inline rows are not parsed a second time for nothing.
  const mayName = (t: string): boolean => /file|\\/i.test(t);
  if (!mayName(specText) && !chains.some(c => c.length > 0 && mayName(JSON.stringify(c)))) return [];
  const read = readSpecValue(specText);
  if (!read.ok) return [];
  const names = new Set<string>();
  for (const chain of [[], ...chains]) {
    const applied = applyPatches(read.value, chain);
    if (applied.ok) for (const n of specFileNames(applied.value)) names.add(n);
  }
  return [...names];
}
