/**
 * Which lines of a spec changed: the text the ledger recorded against the cell's text now.
 * A plain comparison of lines after the longest common head and tail, which names the edited
 * lines exactly for the usual change (a number or a key edited in place).
 */

/** One changed line: its number in the cell's text (1-based) and both versions (null: absent on that side). */
export interface LineChange {
  line: number;
  recorded: string | null;
  current: string | null;
}

/** Most changed lines listed; longer changes are summarized by the first ones. */
export const MAX_LISTED_LINES = 8;

/** The lines between the common head and tail of `recorded` and `current` (at most {@link MAX_LISTED_LINES}). */
export function specChanges(recorded: string, current: string): LineChange[] {
  const a = recorded.split('\n');
  const b = current.split('\n');
  let head = 0;
  while (head < a.length && head < b.length && a[head] === b[head]) head++;
  let tail = 0;
  while (tail < a.length - head && tail < b.length - head && a[a.length - 1 - tail] === b[b.length - 1 - tail]) tail++;
  const out: LineChange[] = [];
  const n = Math.max(a.length - head - tail, b.length - head - tail);
  for (let i = 0; i < n && out.length < MAX_LISTED_LINES; i++) {
    const ra = head + i < a.length - tail ? a[head + i] : null;
    const rb = head + i < b.length - tail ? b[head + i] : null;
    out.push({ line: head + i + 1, recorded: ra, current: rb });
  }
  return out;
}
