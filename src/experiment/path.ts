/**
 * Paths into a spec value ("model.layers[1].units") and short descriptions of values
 * for error messages ("got \"abc\"", "got a list").
 */

/** One step into a value: a mapping key or a list index. */
export type PathSegment = string | number;

/** A path from the spec's root to one value. */
export type Path = readonly PathSegment[];

/** Formats a path as `model.layers[1].units`; the root is the empty string. */
export function formatPath(path: Path): string {
  let out = '';
  for (const seg of path) {
    if (typeof seg === 'number') out += `[${seg}]`;
    else out += out === '' ? seg : `.${seg}`;
  }
  return out;
}

/** The subject of a sentence about `path`: the formatted path, or "the spec" at the root. */
export function subject(path: Path): string {
  return path.length === 0 ? 'the spec' : formatPath(path);
}

/** Where a key lives, for "unknown key 'x' in recipe" / "at the top level". */
export function placeOf(path: Path): string {
  return path.length === 0 ? 'at the top level' : `in ${formatPath(path)}`;
}

/** Describes a value briefly for "got …": strings quoted, collections by kind. */
export function describe(value: unknown): string {
  if (value === null || value === undefined) return 'nothing (an empty value)';
  if (typeof value === 'string') return JSON.stringify(value.length > 40 ? `${value.slice(0, 37)}...` : value);
  if (typeof value === 'number') return Object.is(value, -0) ? '-0' : String(value);
  if (typeof value === 'boolean') return String(value);
  if (Array.isArray(value)) return value.length === 0 ? 'an empty list' : `a list of ${value.length}`;
  if (typeof value === 'object') return 'a mapping';
  return String(value);
}

/** Levenshtein edit distance (insert, delete, substitute each cost 1). */
export function editDistance(a: string, b: string): number {
  const prev = new Array<number>(b.length + 1);
  for (let j = 0; j <= b.length; j++) prev[j] = j;
  for (let i = 1; i <= a.length; i++) {
    let diag = prev[0];
    prev[0] = i;
    for (let j = 1; j <= b.length; j++) {
      const up = prev[j];
      prev[j] = Math.min(prev[j] + 1, prev[j - 1] + 1, diag + (a[i - 1] === b[j - 1] ? 0 : 1));
      diag = up;
    }
  }
  return prev[b.length];
}

/**
 * The closest candidate to `word` (case-insensitive), if it is close enough to be a
 * plausible typo: edit distance at most max(1, ⌊len/3⌋), or one is a prefix of the other.
 */
export function closest(word: string, candidates: readonly string[]): string | undefined {
  const w = word.toLowerCase();
  let best: string | undefined;
  let bestD = Infinity;
  for (const c of candidates) {
    const lc = c.toLowerCase();
    let d = editDistance(w, lc);
    if (d > Math.max(1, Math.floor(Math.max(w.length, lc.length) / 3)) && !(w.length >= 2 && lc.startsWith(w))) continue;
    if (lc.startsWith(w)) d = Math.min(d, 1);
    if (d < bestD) {
      best = c;
      bestD = d;
    }
  }
  return best;
}
