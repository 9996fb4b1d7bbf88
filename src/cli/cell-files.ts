/**
 * The files a notebook cell's experiment names (data, targets, held-out data, initial weights),
 * read from disk relative to the notebook's folder, for the spec as written and every branch's
 * patched spec. A file that cannot be read becomes a problem naming the cell, the spec key, the
 * name as written and the resolved path; nothing is thrown.
 */
import { readFileSync, statSync } from 'node:fs';
import { dirname, resolve } from 'node:path';
import { readSpecValue, specFileRefs } from '../experiment';
import { formatPath } from '../experiment/path';
import { applyPatches, type SpecPatch } from '../experiment/patch';
import { DEFAULT_LIMITS } from '../core/data';
import type { Ledger } from '../ledger';

/** One file a cell names, as found on disk. */
export interface CellFile {
  /** The name as the spec writes it. */
  name: string;
  /** The path it was read from. */
  path: string;
  bytes: number;
}

/** The bytes of the files a cell names, and why any could not be read. */
export interface CellFiles {
  files: Map<string, Uint8Array>;
  found: CellFile[];
  problems: string[];
}

/**
 * Reads every file that `specText`, patched by each of `chains`, names, relative to the folder of
 * `notebookPath`. Each file is read once; files above the readers' size limit are refused
 * before they are read.
 */
export function readCellFiles(notebookPath: string, where: string, specText: string, chains: readonly (readonly SpecPatch[])[]): CellFiles {
  const out: CellFiles = { files: new Map(), found: [], problems: [] };
  const read = readSpecValue(specText);
  if (!read.ok) return out; // the parse that follows reports the syntax errors
  for (const chain of [[], ...chains]) {
    const applied = applyPatches(read.value, chain);
    if (!applied.ok) continue; // the branch's own parse reports it
    for (const ref of specFileRefs(applied.value)) {
      if (out.files.has(ref.name) || out.problems.some((p) => p.includes(`'${ref.name}'`))) continue;
      const full = resolve(dirname(notebookPath), ref.name);
      try {
        const size = statSync(full).size;
        if (size > DEFAULT_LIMITS.maxBytes) throw new Error(`${size} bytes, more than the ${DEFAULT_LIMITS.maxBytes} a data or weights file may have`);
        const bytes = new Uint8Array(readFileSync(full));
        out.files.set(ref.name, bytes);
        out.found.push({ name: ref.name, path: full, bytes: bytes.length });
      } catch (e) {
        const why = (e as NodeJS.ErrnoException).code ?? (e as Error).message;
        out.problems.push(`${where}: ${formatPath(ref.path)}: cannot read '${ref.name}' (${full}, relative to the notebook's folder): ${why}`);
      }
    }
  }
  return out;
}

/** Each forked branch's patch chain (root first), from a ledger's parent links. */
export function ledgerChains(ledger: Ledger): SpecPatch[][] {
  const chains = new Map<string, SpecPatch[]>();
  for (const b of ledger.branches) chains.set(b.name, b.parent ? [...(chains.get(b.parent.branch) ?? []), (b.patch ?? {}) as SpecPatch] : []);
  return [...chains.values()].filter((c) => c.length > 0);
}
