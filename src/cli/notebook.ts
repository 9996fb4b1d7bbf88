/**
 * Reading a notebook file for `stepwell verify`, `report` and `export --cell`: the notebook is
 * untrusted input, so its size is checked before it is read, its JSON and nbformat shape are
 * checked before use, and nothing in it is ever executed. Every problem names the file and,
 * inside it, the cell (its index in the notebook, counting from 0, and its id when it has one).
 */
import { statSync } from 'node:fs';
import { MAGIC_LINE } from '../experiment';
import { LEDGER_KEY } from '../ledger';
import { CliError, readText } from './io';

/** Cell-metadata key of a decision record (the markdown cell the app writes below a stepwell cell). */
export const RECORD_KEY = 'stepwell-record';

/** Largest notebook file read (checked before reading): far above what a ledger cap allows. */
export const MAX_NOTEBOOK_BYTES = 256 * 1024 * 1024;

/** One cell of a notebook, as the commands need it. */
export interface NotebookCell {
  /** Position in the notebook, counting from 0 (what `--cell N` takes). */
  index: number;
  /** nbformat 4.5 cell id, when the cell has one. */
  id: string | null;
  type: string;
  /** The cell's text (nbformat stores it as a string or a list of lines). */
  source: string;
  /** The raw value under the ledger key, when there is one. */
  ledger: unknown;
  /** The raw value under the decision-record key (`stepwell-record`), when there is one. */
  record: unknown;
}

/** A notebook read from disk. */
export interface Notebook {
  path: string;
  cells: NotebookCell[];
}

const isObj = (v: unknown): v is Record<string, unknown> => typeof v === 'object' && v !== null && !Array.isArray(v);

/** A cell's source: a string, or a list of strings joined (nbformat's two forms). */
function sourceText(v: unknown, where: string, path: string): string {
  if (typeof v === 'string') return v;
  if (Array.isArray(v) && v.every((x) => typeof x === 'string')) return v.join('');
  throw new CliError(`${path}: ${where}: source must be text or a list of lines (nbformat 4)`);
}

/**
 * Reads and checks a notebook (nbformat 4): a JSON object with a `cells` list whose entries
 * have a `cell_type` and a `source`.
 *
 * @throws CliError (exit 2) naming the file and the cell when it cannot be read.
 */
export function readNotebook(path: string): Notebook {
  let size: number;
  try {
    size = statSync(path).size;
  } catch (e) {
    throw new CliError(`cannot read notebook '${path}': ${(e as NodeJS.ErrnoException).code ?? (e as Error).message}`);
  }
  if (size > MAX_NOTEBOOK_BYTES) throw new CliError(`${path}: the notebook is ${size} bytes, more than the ${MAX_NOTEBOOK_BYTES} read`);
  const text = readText(path, 'notebook');
  let value: unknown;
  try {
    value = JSON.parse(text);
  } catch (e) {
    throw new CliError(`${path}: not a notebook: the file is not JSON (${(e as Error).message})`);
  }
  if (!isObj(value) || !Array.isArray(value.cells)) throw new CliError(`${path}: not a notebook: expected a JSON object with a list of cells (nbformat 4)`);
  if (typeof value.nbformat === 'number' && value.nbformat !== 4) throw new CliError(`${path}: nbformat ${value.nbformat} is not read; save the notebook as nbformat 4`);
  const cells = value.cells.map((c: unknown, index: number): NotebookCell => {
    const where = `cell ${index}`;
    if (!isObj(c)) throw new CliError(`${path}: ${where}: expected an object`);
    const id = typeof c.id === 'string' ? c.id : null;
    const type = typeof c.cell_type === 'string' ? c.cell_type : '';
    const meta = isObj(c.metadata) ? c.metadata : {};
    return { index, id, type, source: sourceText(c.source ?? '', where, path), ledger: meta[LEDGER_KEY], record: meta[RECORD_KEY] };
  });
  return { path, cells };
}

/** How a cell is named in messages: `cell 2 (gh-calibration)`. */
export function cellLabel(c: NotebookCell): string {
  return c.id === null ? `cell ${c.index}` : `cell ${c.index} (${c.id})`;
}

/** Code cells with a ledger (the cells there is something to verify, report or export in). */
export function ledgerCells(nb: Notebook): NotebookCell[] {
  return nb.cells.filter((c) => c.type === 'code' && c.ledger !== undefined);
}

/** Code cells that start with the `%%stepwell` line but have no ledger yet (never stepped). */
export function unsteppedCells(nb: Notebook): NotebookCell[] {
  return nb.cells.filter((c) => c.type === 'code' && c.ledger === undefined && MAGIC_LINE.test(c.source));
}

/**
 * The cells a command works on: every cell with a ledger, or the one `--cell N` names.
 *
 * @throws CliError naming the notebook when `--cell` is not a cell with a ledger, or there is none.
 */
export function selectCells(nb: Notebook, cell: string | undefined): NotebookCell[] {
  const withLedger = ledgerCells(nb);
  const listed = withLedger.length > 0 ? `cells with a ledger: ${withLedger.map((c) => c.index).join(', ')}` : 'no cell has a ledger';
  if (cell === undefined) {
    if (withLedger.length === 0) {
      const fresh = unsteppedCells(nb);
      throw new CliError(`${nb.path}: no stepwell cell with a ledger${fresh.length > 0 ? ` (${fresh.map(cellLabel).join(', ')} ${fresh.length > 1 ? 'were' : 'was'} never stepped)` : ''}: nothing to work on`);
    }
    return withLedger;
  }
  if (!/^\d+$/.test(cell)) throw new CliError(`--cell must be a cell index counting from 0 (${listed}), got '${cell.slice(0, 40)}'`);
  const n = Number(cell);
  const c = nb.cells[n];
  if (c === undefined) throw new CliError(`--cell ${n}: the notebook has ${nb.cells.length} cells (0 to ${nb.cells.length - 1}); ${listed}`);
  if (c.type !== 'code' || c.ledger === undefined) throw new CliError(`--cell ${n}: ${cellLabel(c)} is a ${c.type || 'untyped'} cell without a Stepwell ledger; ${listed}`);
  return [c];
}
