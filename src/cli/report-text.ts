/** Sentences both report formats share: the heading, the verdicts, the proxy-model note. */
import { basename } from 'node:path';
import type { NotebookCheck } from './verify';
import type { Verdict } from './verify-cell';

/**
 * What a small proxy experiment can and cannot say (the same caution the cell and its saved
 * summary carry).
 */
export const PROXY_NOTE =
  'These readouts come from a small proxy experiment. They are evidence about this setup and recipe, ' +
  'not a guarantee of how the full-scale model and data will behave: confirm a fix at full scale.';

/** A cell's verdict in one sentence. */
export function verdictSentence(v: Verdict, branches: number): string {
  switch (v) {
    case 'bit-identical':
      return `Verified: ${branches === 1 ? 'the branch replays' : branches === 2 ? 'both branches replay' : `all ${branches} branches replay`} bit for bit from spec and seed.`;
    case 'within-tolerance':
      return 'Not bit-identical: the replay differs in the last bits, within the tolerance (see below).';
    case 'differs':
      return 'Not verified: the replay differs, or the spec, data or ledger changed (see below).';
    case 'unreadable':
      return 'Not verified: this cell cannot be replayed (see below).';
  }
}

/** Title, provenance line and overall verdict of a report. */
export function reportHeading(r: NotebookCheck, generated: string): { title: string; meta: string; verdict: string } {
  const n = r.cells.reduce((a, c) => a + c.branches.length, 0);
  const verdict =
    r.verdict === 'bit-identical'
      ? `Every branch of every cell (${n} branch${n === 1 ? '' : 'es'} in ${r.cells.length} cell${r.cells.length === 1 ? '' : 's'}) replays bit for bit.`
      : r.verdict === 'within-tolerance'
        ? 'Not every branch replays bit for bit; every difference is within the tolerance.'
        : 'Not verified: see the cells marked below.';
  return {
    title: `Stepwell report: ${basename(r.notebook)}`,
    meta: `Generated ${generated} by stepwell report; replayed by ${r.engine} in Node ${process.versions.node} from each cell's spec and seed.`,
    verdict
  };
}
