/** Writing Python source: exact float literals, wrapped lists, string literals. */

/**
 * A Python float literal that reads back as exactly `x`: JavaScript's shortest round-trip
 * digits (both languages parse decimal text with correct rounding), with `.0` added to integers
 * so the value stays a float (and −0 keeps its sign).
 */
export function py(x: number): string {
  if (!Number.isFinite(x)) throw new RangeError(`cannot write ${x} as a Python literal`);
  const s = Object.is(x, -0) ? '-0' : String(x);
  return /[.eE]/.test(s) ? s : `${s}.0`;
}

/** A Python string literal (JSON's escapes are valid Python). */
export function pyString(s: string): string {
  return JSON.stringify(s);
}

/** A list of floats as Python source, wrapped at about `width` characters, indented by `indent`. */
export function pyFloats(values: ArrayLike<number>, indent: string, width = 100): string {
  const lines: string[] = [];
  let line = '';
  for (let i = 0; i < values.length; i++) {
    const item = py(values[i]) + (i < values.length - 1 ? ',' : '');
    if (line.length + item.length + 1 > width && line !== '') {
      lines.push(line);
      line = '';
    }
    line += (line === '' ? '' : ' ') + item;
  }
  if (line !== '') lines.push(line);
  return `[\n${lines.map((l) => indent + '    ' + l).join('\n')}\n${indent}]`;
}
