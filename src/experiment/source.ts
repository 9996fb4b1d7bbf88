/**
 * Reads spec text (YAML, or JSON — which is YAML too) into a plain value while keeping
 * the source ranges, so every later error can point at a line and column.
 */
import { isAlias, isMap, isPair, isScalar, isSeq, parseDocument, visit } from 'yaml';
import type { Document, Node as YamlNode, Pair, YAMLMap } from 'yaml';
import type { Path } from './path';

/** A 1-based line and column plus the 0-based character offset. */
export interface SourcePosition {
  offset: number;
  line: number;
  col: number;
}

/** A problem found while reading the text itself (syntax, duplicate keys). */
export interface ReadProblem {
  message: string;
  position?: SourcePosition;
}

/** Which node of a path to point at: the value, or the key that introduces it. */
export type Anchor = 'value' | 'key';

/** The parsed text: its plain value and a way back from paths to positions. */
export interface SourceText {
  /** The plain JavaScript value (undefined when the text holds nothing). */
  value: unknown;
  /**
   * Position of the node at `path`, or of its nearest existing ancestor. `within` moves inside a
   * plain or quoted one-line string value to that character of its text (escapes not counted).
   */
  locate(path: Path, anchor?: Anchor, within?: number): SourcePosition | undefined;
}

/** Outcome of {@link readSource}: a usable text, or the reasons it is not. */
export type ReadResult =
  | { ok: true; source: SourceText; warnings: ReadProblem[] }
  | { ok: false; problems: ReadProblem[] };

/**
 * The first line a stepwell cell may carry so that a Python kernel runs it as the `%%stepwell`
 * cell magic (which only prints a notice) instead of failing on YAML: `%%stepwell` plus
 * anything after it on that line. It is not part of the spec.
 */
export const MAGIC_LINE = /^%%stepwell(?![\w-])[^\n]*/;

/**
 * The text with a leading magic line blanked out to spaces of the same length, so every
 * offset, line and column of the rest is still that of the cell's text (a YAML parser would
 * otherwise read `%` as the start of a directive).
 */
export function maskMagicLine(text: string): string {
  const m = MAGIC_LINE.exec(text);
  return m === null ? text : ' '.repeat(m[0].length) + text.slice(m[0].length);
}

/** Maps 0-based offsets to 1-based line and column (a linear scan; see {@link lineIndex} for many lookups). */
export function positionAt(text: string, offset: number): SourcePosition {
  return lineIndex(text)(offset);
}

/**
 * A function from 0-based offsets to positions in `text`, answering each lookup by binary search
 * over the line starts found once — a spec with thousands of problems is placed in linear time.
 */
export function lineIndex(text: string): (offset: number) => SourcePosition {
  const starts = [0];
  for (let i = text.indexOf('\n'); i >= 0; i = text.indexOf('\n', i + 1)) starts.push(i + 1);
  return (offset: number): SourcePosition => {
    const clamped = Math.max(0, Math.min(offset, text.length));
    let lo = 0;
    let hi = starts.length - 1;
    while (lo < hi) {
      const mid = (lo + hi + 1) >> 1;
      if (starts[mid] <= clamped) lo = mid;
      else hi = mid - 1;
    }
    return { offset: clamped, line: lo + 1, col: clamped - starts[lo] + 1 };
  };
}

/** Deepest nesting of lists and mappings a spec may use (a real spec needs about six). */
export const MAX_NESTING = 64;

/**
 * The first place where flow collections (`[`, `{`) or block indentation nest deeper than
 * {@link MAX_NESTING}, found in one pass over the text before any parser recurses into it (a
 * 10 000-deep list would otherwise overflow the call stack, a 100 000-deep one exhaust memory).
 * Quoted strings and comments are skipped.
 */
export function nestingProblem(text: string): ReadProblem | undefined {
  const at = lineIndex(text);
  let depth = 0;
  let quote: string | null = null;
  let lineStart = true;
  let indents: number[] = [];
  for (let i = 0; i < text.length; i++) {
    const c = text[i];
    if (quote !== null) {
      if (c === '\\' && quote === '"') i++;
      else if (c === quote) quote = null;
      continue;
    }
    if (lineStart) {
      let j = i;
      while (text[j] === ' ') j++;
      const blank = text[j] === '\n' || text[j] === '#' || j >= text.length;
      if (!blank && depth === 0) {
        const indent = j - i;
        indents = indents.filter((k) => k < indent);
        indents.push(indent);
        if (indents.length > MAX_NESTING) return { message: `the spec nests mappings or lists more than ${MAX_NESTING} levels deep by indentation`, position: at(j) };
      }
      lineStart = false;
    }
    if (c === '\n') lineStart = true;
    else if (c === '#' && (i === 0 || /\s/.test(text[i - 1]))) {
      const end = text.indexOf('\n', i);
      i = (end < 0 ? text.length : end) - 1;
    } else if (c === '"' || c === "'") quote = c;
    else if (c === '[' || c === '{') {
      depth++;
      if (depth > MAX_NESTING) return { message: `the spec nests lists or mappings more than ${MAX_NESTING} levels deep`, position: at(i) };
    } else if (c === ']' || c === '}') depth = Math.max(0, depth - 1);
  }
  return undefined;
}

/** The first line of a yaml error message, without its own "at line …" suffix. */
function cleanMessage(message: string): string {
  const first = message.split('\n')[0];
  return first.replace(/ at line \d+, column \d+:?\s*$/, '').trim();
}

/** Checks strict JSON syntax and reports the offending position (Node and browsers differ in wording). */
function jsonProblem(text: string): ReadProblem | undefined {
  try {
    JSON.parse(text);
    return undefined;
  } catch (err) {
    const message = err instanceof Error ? err.message : String(err);
    const m = /position (\d+)/.exec(message);
    const lc = /line (\d+) column (\d+)/.exec(message);
    let position: SourcePosition | undefined;
    if (m) position = positionAt(text, Number(m[1]));
    else if (lc) {
      const line = Number(lc[1]);
      const lines = text.split('\n');
      let offset = 0;
      for (let i = 0; i < line - 1 && i < lines.length; i++) offset += lines[i].length + 1;
      position = positionAt(text, offset + Number(lc[2]) - 1);
    } else if (/end of (JSON )?input/i.test(message)) position = positionAt(text, text.length);
    return { message: `invalid JSON: ${message.replace(/ in JSON at position \d+.*$/, '').replace(/\s*\(line \d+ column \d+\)$/, '')}`, position };
  }
}

/**
 * Parses `cellText` as YAML (or strict JSON when `format` is `json`), keeping node ranges.
 * A leading `%%stepwell` line is ignored ({@link maskMagicLine}); positions count it.
 * Never throws; syntax problems come back with their positions.
 */
export function readSource(cellText: string, format: 'yaml' | 'json'): ReadResult {
  const text = maskMagicLine(cellText);
  if (format === 'json') {
    const problem = jsonProblem(text);
    if (problem) return { ok: false, problems: [problem] };
  }
  const deep = nestingProblem(text);
  if (deep !== undefined) return { ok: false, problems: [deep] };
  const at = lineIndex(text);
  let doc: Document.Parsed;
  try {
    // Duplicate keys are found below in linear time; yaml's own check compares every pair.
    doc = parseDocument(text, { prettyErrors: false, uniqueKeys: false, strict: true });
  } catch (err) {
    return { ok: false, problems: [{ message: `could not read the spec: ${err instanceof Error ? err.message : String(err)}` }] };
  }
  const toProblem = (e: { message: string; pos: [number, number] }): ReadProblem => ({
    message: cleanMessage(e.message),
    position: at(e.pos[0]),
  });
  if (doc.errors.length > 0) return { ok: false, problems: doc.errors.map(toProblem) };
  const duplicates = duplicateKeys(doc.contents, at);
  if (duplicates.length > 0) return { ok: false, problems: duplicates };
  let value: unknown;
  try {
    value = doc.toJS(); // yaml's default alias limit guards against expansion bombs
  } catch (err) {
    // the only failure here is an alias expansion beyond yaml's limit: point at the first alias
    let first: number | undefined;
    visit(doc, { Alias(_k, node) { first ??= node.range?.[0]; } });
    return { ok: false, problems: [{ message: `could not read the spec: ${err instanceof Error ? err.message.split('\n')[0] : String(err)} (aliases may not expand a spec into a huge value)`, position: at(first ?? 0) }] };
  }
  const pairsOf = new WeakMap<object, Map<string, Pair>>();
  const pairIn = (map: YAMLMap, key: string): Pair | undefined => {
    let index = pairsOf.get(map);
    if (index === undefined) {
      index = new Map();
      for (const p of map.items) if (isPair(p) && isScalar(p.key) && !index.has(String(p.key.value))) index.set(String(p.key.value), p as Pair);
      pairsOf.set(map, index);
    }
    return index.get(key);
  };
  const locate = (path: Path, anchor: Anchor = 'value', within?: number): SourcePosition | undefined => {
    const pos = (n: YamlNode | null | undefined): SourcePosition | undefined => (n && n.range ? at(n.range[0]) : undefined);
    let node: unknown = doc.contents;
    let best = pos(doc.contents as YamlNode | null);
    for (let i = 0; i < path.length; i++) {
      if (isAlias(node)) node = node.resolve(doc);
      const seg = path[i];
      let next: unknown;
      let keyNode: unknown;
      if (isMap(node)) {
        const pair = pairIn(node, String(seg));
        if (pair) {
          next = pair.value;
          keyNode = pair.key;
        }
      } else if (isSeq(node) && typeof seg === 'number') {
        next = node.items[seg];
      }
      if (next === undefined && keyNode === undefined) return best;
      const last = i === path.length - 1;
      const here = last && anchor === 'key' && keyNode ? pos(keyNode as YamlNode) : pos(next as YamlNode) ?? pos(keyNode as YamlNode);
      if (here) best = here;
      node = next;
    }
    if (within !== undefined && anchor === 'value' && isScalar(node) && node.range && typeof node.source === 'string') {
      const quoted = node.type === 'QUOTE_DOUBLE' || node.type === 'QUOTE_SINGLE';
      if (quoted || node.type === 'PLAIN') return at(node.range[0] + (quoted ? 1 : 0) + Math.max(0, Math.min(within, node.source.length)));
    }
    return best;
  };
  return { ok: true, source: { value, locate }, warnings: doc.warnings.map(toProblem) };
}

/** Keys that appear twice in one mapping, found with one set per mapping (linear in the text). */
function duplicateKeys(root: unknown, at: (offset: number) => SourcePosition): ReadProblem[] {
  const problems: ReadProblem[] = [];
  visit(root as YamlNode, {
    Map(_key, map) {
      const seen = new Set<string>();
      for (const p of map.items) {
        if (!isScalar(p.key)) continue;
        const k = String(p.key.value);
        if (seen.has(k)) problems.push({ message: `Map keys must be unique; '${k}' appears more than once`, position: p.key.range ? at(p.key.range[0]) : undefined });
        seen.add(k);
      }
    }
  });
  return problems;
}
