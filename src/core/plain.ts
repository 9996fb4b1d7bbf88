/**
 * Deep copy of plain data (numbers, strings, booleans, null, arrays, typed arrays and plain
 * objects) in ECMAScript alone: `structuredClone` is a host API (HTML, Node) that SpiderMonkey's
 * shell and QuickJS do not have, and core runs in every engine.
 */

/** A deep copy of `value`; typed arrays are copied, other objects are copied key by key. */
export function copyPlain<T>(value: T): T {
  if (value === null || typeof value !== 'object') return value;
  if (ArrayBuffer.isView(value)) return (value as unknown as Float64Array).slice() as unknown as T;
  if (Array.isArray(value)) return value.map((v: unknown) => copyPlain(v)) as unknown as T;
  const out: Record<string, unknown> = {};
  for (const [k, v] of Object.entries(value as Record<string, unknown>)) out[k] = copyPlain(v);
  return out as T;
}
