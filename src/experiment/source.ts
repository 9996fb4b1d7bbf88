/**
 * Reads spec text (YAML, or JSON — which is YAML too) into a plain value while keeping
 * the source ranges, so every later error can point at a line and column.
 */
import { isAlias, isMap, isPair, isScalar, isSeq, parseDocument } from 'yaml';
import type { Document, Node as YamlNode } from 'yaml';
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
  /** Position of the node at `path`, or of its nearest existing ancestor. */
  locate(path: Path, anchor?: Anchor): SourcePosition | undefined;
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

/** Maps 0-based offsets to 1-based line and column. */
export function positionAt(text: string, offset: number): SourcePosition {
  const clamped = Math.max(0, Math.min(offset, text.length));
  let line = 1;
  let start = 0;
  for (let i = 0; i < clamped; i++) {
    if (text.charCodeAt(i) === 10) {
      line++;
      start = i + 1;
    }
  }
  return { offset: clamped, line, col: clamped - start + 1 };
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
  let doc: Document.Parsed;
  try {
    doc = parseDocument(text, { prettyErrors: false, uniqueKeys: true, strict: true });
  } catch (err) {
    return { ok: false, problems: [{ message: `could not read the spec: ${err instanceof Error ? err.message : String(err)}` }] };
  }
  const toProblem = (e: { message: string; pos: [number, number] }): ReadProblem => ({
    message: cleanMessage(e.message),
    position: positionAt(text, e.pos[0]),
  });
  if (doc.errors.length > 0) return { ok: false, problems: doc.errors.map(toProblem) };
  let value: unknown;
  try {
    value = doc.toJS(); // yaml's default alias limit guards against expansion bombs
  } catch (err) {
    return { ok: false, problems: [{ message: `could not read the spec: ${err instanceof Error ? err.message : String(err)}` }] };
  }
  const locate = (path: Path, anchor: Anchor = 'value'): SourcePosition | undefined => {
    const at = (n: YamlNode | null | undefined): SourcePosition | undefined =>
      n && n.range ? positionAt(text, n.range[0]) : undefined;
    let node: unknown = doc.contents;
    let best = at(doc.contents as YamlNode | null);
    for (let i = 0; i < path.length; i++) {
      if (isAlias(node)) node = node.resolve(doc);
      const seg = path[i];
      let next: unknown;
      let keyNode: unknown;
      if (isMap(node)) {
        const pair = node.items.find((p) => isPair(p) && isScalar(p.key) && String(p.key.value) === String(seg));
        if (pair) {
          next = pair.value;
          keyNode = pair.key;
        }
      } else if (isSeq(node) && typeof seg === 'number') {
        next = node.items[seg];
      }
      if (next === undefined && keyNode === undefined) return best;
      const last = i === path.length - 1;
      const pos = last && anchor === 'key' && keyNode ? at(keyNode as YamlNode) : at(next as YamlNode) ?? at(keyNode as YamlNode);
      if (pos) best = pos;
      node = next;
    }
    return best;
  };
  return { ok: true, source: { value, locate }, warnings: doc.warnings.map(toProblem) };
}
