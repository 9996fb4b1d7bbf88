/**
 * `stepwell verify NOTEBOOK.ipynb [--json] [--cell N]`: replays every stepwell cell of a
 * notebook, every branch, from spec and seed to every stored checkpoint and its tip, and says per
 * cell and branch: bit-identical, within tolerance (which quantity, how far), or differs from
 * step k (which quantity, which record). Also what changed since each ledger was written: the
 * spec text, the data files, the engine. No browser, no network; nothing in the notebook runs.
 *
 * Exit status: 0 when every branch of every cell is bit-identical and nothing changed;
 * {@link EXIT_DIFFERS} when a replay differs, the spec or the data changed, the ledger was
 * edited, or a cell cannot be verified; {@link EXIT_WITHIN} when the only differences are within
 * the tolerance; 2 for bad input (no notebook, no ledger, bad flags).
 */
import { ENGINE_NAME } from '../core/engine';
import type { ReplayDifference } from '../core/session';
import { fmt } from '../figures/format';
import { positiveInt, toJson, type CommandResult } from './io';
import { readNotebook, selectCells, unsteppedCells, type Notebook, type NotebookCell } from './notebook';
import { verifyCell, worstVerdict, type BranchCheck, type CellCheck, type CellWork, type Verdict } from './verify-cell';

/** Exit status when something differs or changed, or a cell cannot be verified. */
export const EXIT_DIFFERS = 4;
/** Exit status when every difference is within the tolerance (no replay is bit-identical only there). */
export const EXIT_WITHIN = 5;
/** Default of `--max-updates`: updates the replays of one cell may take. */
export const MAX_REPLAY_UPDATES = 2_000_000;

/** Flags of `verify`. */
export interface VerifyFlags {
  json?: boolean;
  cell?: string;
  'max-updates'?: string;
}

/** The whole notebook's verification, as `--json` prints it. */
export interface NotebookCheck {
  notebook: string;
  engine: string;
  verdict: Verdict;
  cells: CellCheck[];
  /** Cells that start with `%%stepwell` but were never stepped (nothing to verify). */
  unstepped: number[];
}

/** Verifies the cells of a notebook (all with a ledger, or `--cell N`); the works keep what a report draws. */
export function verifyNotebook(path: string, flags: Pick<VerifyFlags, 'cell' | 'max-updates'>): { result: NotebookCheck; works: CellWork[]; notebook: Notebook; cells: NotebookCell[] } {
  const nb = readNotebook(path);
  const cells = selectCells(nb, flags.cell);
  const maxUpdates = positiveInt(flags['max-updates'], '--max-updates', MAX_REPLAY_UPDATES);
  const works = cells.map((c) => verifyCell(path, c, { maxUpdates }));
  const result: NotebookCheck = {
    notebook: path,
    engine: ENGINE_NAME,
    verdict: worstVerdict(works.map((w) => w.check.verdict)),
    cells: works.map((w) => w.check),
    unstepped: flags.cell === undefined ? unsteppedCells(nb).map((c) => c.index) : []
  };
  return { result, works, notebook: nb, cells };
}

/** The exit status of a verdict. */
export function verdictExit(v: Verdict): number {
  return v === 'bit-identical' ? 0 : v === 'within-tolerance' ? EXIT_WITHIN : EXIT_DIFFERS;
}

/** Runs the command. */
export function verifyCommand(path: string, flags: VerifyFlags): CommandResult {
  const { result } = verifyNotebook(path, flags);
  const code = verdictExit(result.verdict);
  if (flags.json) return { out: toJson(result) + '\n', warnings: [], code };
  return { out: verifyText(result).join('\n') + '\n', warnings: [], code };
}

/** A value of a difference as printed: numbers with all their digits, fingerprints shortened. */
function shown(v: number | string): string {
  return typeof v === 'number' ? String(v) : v.slice(0, 12);
}

const QUANTITY: Record<ReplayDifference['quantity'], string> = {
  step: 'the step number',
  loss: 'the loss',
  gradNorm: 'the gradient norm',
  updateNorm: 'the update norm',
  lr: 'the learning rate',
  fingerprint: 'the state fingerprint',
  weights: 'the weights'
};

/** One sentence for the first difference: which quantity, which record or state, both values. */
export function differenceText(d: ReplayDifference): string {
  if (d.quantity === 'weights') return `the weights stored at step ${d.step} are not the replay's (relative difference ${short(d.relative ?? NaN)}) although their stored fingerprint is`;
  const what = d.where === 'record' ? `${QUANTITY[d.quantity]} of stored record ${d.step}` : d.where === 'checkpoint' ? `${QUANTITY[d.quantity]} of the checkpoint at step ${d.step}` : `${QUANTITY[d.quantity]} at the tip (step ${d.step})`;
  const rel = d.relative !== undefined ? ` (relative difference ${short(d.relative)})` : '';
  return `${what} is ${shown(d.recorded)} in the ledger, ${shown(d.replayed)} replayed${rel}`;
}

/** A relative difference or tolerance in three significant digits (`1e-9`, `0.012`, `1.15e-6`). */
export function short(v: number): string {
  return Number.isFinite(v) ? String(Number(v.toPrecision(3))) : fmt(v);
}

/** The line of one branch. */
export function branchText(b: BranchCheck): string {
  const from = b.parent === null ? '' : `from ${b.parent} at step ${b.forkStep}, `;
  const what = `${from}${b.steps} steps: ${b.records} records and ${b.checkpoints.length} states compared`;
  const first = b.firstDifference ? differenceText(b.firstDifference) : 'the state fingerprint differs';
  switch (b.match) {
    case 'bit-identical':
      return `bit-identical (${what}; fingerprint ${b.recordedFingerprint.slice(0, 12)})`;
    case 'within-tolerance': {
      const weights = b.maxRelDiff === 0 ? 'every compared state has the same weights' : `the weights differ by at most ${short(b.maxRelDiff)} relative (tolerance ${short(b.tolerance)})`;
      return `within tolerance: ${weights}, but not bit for bit from step ${b.firstDifferingStep}: ${first} (${what})`;
    }
    case 'differs':
      return `differs from step ${b.firstDifferingStep}: ${first}; the weights differ by up to ${short(b.maxRelDiff)} relative, beyond the tolerance ${short(b.tolerance)} (${what})`;
  }
}

/** Lines describing one cell: what changed, then one line per branch, then the problems. */
export function cellText(c: CellCheck): string[] {
  const label = c.id === null ? `cell ${c.index}` : `cell ${c.index} (${c.id})`;
  const lines = [`${label}: ${c.verdict}`];
  if (c.engine.recorded !== null) {
    lines.push(`  engine  ${c.engine.changed ? `written by ${c.engine.recorded}, replayed by ${c.engine.current}: the arithmetic may differ (a difference from step 0 is expected across engine versions)` : `${c.engine.current}, as written`}`);
  }
  if (c.spec.recordedHash !== null) {
    if (!c.spec.changed) lines.push(`  spec    unchanged (sha256 ${c.spec.recordedHash.slice(0, 12)})`);
    else {
      lines.push(`  spec    CHANGED since the ledger was written: sha256 ${c.spec.recordedHash.slice(0, 12)} in the ledger, ${c.spec.currentHash.slice(0, 12)} now; ${c.spec.replayed === 'cell' ? "the cell's text was replayed" : "the cell's text does not parse, the ledger's was replayed"}`);
      for (const l of c.spec.lines) lines.push(`          line ${l.line}: ${l.recorded === null ? '(absent)' : JSON.stringify(l.recorded)} → ${l.current === null ? '(absent)' : JSON.stringify(l.current)}`);
      for (const e of c.spec.errors) lines.push(`          ${e}`);
    }
  }
  if (c.data.files.length > 0 || c.data.recordedHash !== null) {
    const files = c.data.files.map((f) => `${f.name} (sha256 ${f.sha256.slice(0, 12)})`).join(', ');
    if (!c.data.changed) lines.push(`  data    unchanged: hash ${c.data.currentHash?.slice(0, 12) ?? '—'}${files ? ` from ${files}` : ''}`);
    else lines.push(`  data    CHANGED since the ledger was written: data hash ${c.data.recordedHash ?? 'none (inline data)'} in the ledger, ${c.data.currentHash ?? 'none (inline data)'} now${files ? `, read from ${files}` : ''}`);
  }
  const changedFiles = c.branchFiles.filter((f) => f.changed);
  if (c.branchFiles.length > 0 && changedFiles.length === 0) lines.push(`  files   unchanged: ${new Set(c.branchFiles.map((f) => f.name)).size} file(s) the branches read have the bytes recorded (sha256)`);
  for (const f of changedFiles) {
    const at = f.keys.length > 0 ? f.keys.join(', ') : 'a key no longer in the spec';
    lines.push(`  files   CHANGED: branch '${f.branch}' read '${f.name}' (${at}) with sha256 ${f.recorded.slice(0, 12)}…; ${f.current === null ? 'it cannot be read now' : `it now has sha256 ${f.current.slice(0, 12)}…`} — put the file the branch used back, or start that branch over`);
  }
  const width = Math.max(6, ...c.branches.map((b) => b.name.length));
  for (const b of c.branches) lines.push(`  ${b.name.padEnd(width)}  ${branchText(b)}`);
  for (const i of c.integrity) lines.push(`  edited  ${i}`);
  for (const p of c.problems) lines.push(`  cannot verify: ${p}`);
  return lines;
}

/** The whole readable report of `verify`. */
export function verifyText(r: NotebookCheck): string[] {
  const lines = [`${r.notebook}: ${r.cells.length} stepwell cell${r.cells.length === 1 ? '' : 's'} with a ledger, replayed by ${r.engine}`];
  for (const c of r.cells) lines.push(...cellText(c));
  const n = r.cells.reduce((a, c) => a + c.branches.length, 0);
  if (r.unstepped.length > 0) lines.push(`never stepped (nothing to verify): cell${r.unstepped.length > 1 ? 's' : ''} ${r.unstepped.join(', ')}`);
  const summary: Record<Verdict, string> = {
    'bit-identical': `verified: ${n} branch${n === 1 ? '' : 'es'} in ${r.cells.length} cell${r.cells.length === 1 ? '' : 's'} bit-identical`,
    'within-tolerance': 'NOT bit-identical: every difference is within the tolerance (see above)',
    differs: 'NOT verified: see the lines marked above (differs, CHANGED, edited)',
    unreadable: 'NOT verified: a cell cannot be verified (see above)'
  };
  lines.push(summary[r.verdict]);
  return lines;
}
