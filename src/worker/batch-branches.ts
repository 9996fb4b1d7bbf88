/**
 * Whether compared branches differ only in batch size: every compared branch's patches, from the
 * root down, change no spec key but `batch`. Then the comparison panel shows their loss against
 * examples seen (the fair axis when batch sizes differ) beside the gradient noise scale.
 */
import type { CellGrove } from './cell-grove';

/** One compared branch's rows per update (`full` when the whole training set). */
export interface BatchOfBranch {
  name: string;
  /** Rows per update, or the training rows' count at full batch. */
  batch: number;
  full: boolean;
}

/**
 * The compared branches' batch sizes when they differ only in batch size (two or more distinct
 * sizes, no other key patched anywhere in their ancestry), else null.
 */
export function batchOnlyComparison(cell: CellGrove, names: readonly string[]): BatchOfBranch[] | null {
  if (names.length < 2) return null;
  for (const n of names) for (const patch of cell.patchChain(n)) if (Object.keys(patch).some((k) => k !== 'batch' && k !== 'recipe.batch')) return null;
  const out = names.map((name): BatchOfBranch => {
    const e = cell.grove.experiment(name);
    const rows = e.setup.data?.rows ?? 0;
    const b = e.recipe.batch;
    const full = b === 'full' || b >= rows;
    return { name, batch: full ? rows : b, full };
  });
  return new Set(out.map((b) => b.batch)).size >= 2 && out.every((b) => b.batch > 0) ? out : null;
}
