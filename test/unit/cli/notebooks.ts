/**
 * Notebooks for the command-line tests of verify, report and export: copies of the demo
 * notebooks (stepped in Chromium), a notebook whose cell reads the kiln demo's CSV and
 * safetensors files (stepped here in Node, which is quicker than the app), and
 * edits of one number — in a data row, a stored record, the spec — made the way a person or a
 * tool would make them.
 */
import { copyFileSync, mkdtempSync, readFileSync, writeFileSync } from 'fs';
import { tmpdir } from 'os';
import { join } from 'path';
import { Grove } from '../../../src/core/session';
import { ENGINE_NAME } from '../../../src/core/engine';
import { parseSpec } from '../../../src/experiment';
import { patchChainExperiment } from '../../../src/experiment/patch';
import { buildLedger, trajectoryDigest } from '../../../src/ledger';

export const ROOT = join(__dirname, '..', '..', '..');
export const DEMOS = join(ROOT, 'demo-notebooks');
const KILN = join(DEMOS, 'kiln');

/** A fresh temporary folder. */
export function tempDir(tag: string): string {
  return mkdtempSync(join(tmpdir(), `stepwell-${tag}-`));
}

export type Nb = { cells: { cell_type: string; id?: string; source: string | string[]; metadata: Record<string, any>; outputs?: any[] }[]; [k: string]: unknown };

export const readNb = (path: string): Nb => JSON.parse(readFileSync(path, 'utf8'));
export const writeNb = (path: string, nb: Nb): void => writeFileSync(path, JSON.stringify(nb, null, 1));
export const sourceOf = (cell: Nb['cells'][number]): string => (Array.isArray(cell.source) ? cell.source.join('') : cell.source);

/** A copy of a demo notebook in `dir`, edited by `edit` when given. */
export function demoCopy(name: string, dir: string, edit?: (nb: Nb) => void, as = name): string {
  const nb = readNb(join(DEMOS, name));
  edit?.(nb);
  const out = join(dir, as);
  writeNb(out, nb);
  return out;
}

/** The first cell with a ledger. */
export function ledgerCell(nb: Nb): Nb['cells'][number] {
  const c = nb.cells.find((x) => x.metadata.stepwell !== undefined);
  if (c === undefined) throw new Error('no cell with a ledger');
  return c;
}

/** Base64 float64 column ↔ numbers. */
export const column = (b64: string): Float64Array => new Float64Array(new Uint8Array(Buffer.from(b64, 'base64')).buffer);
export const base64 = (v: Float64Array): string => Buffer.from(new Uint8Array(v.buffer, v.byteOffset, v.byteLength)).toString('base64');

/**
 * Multiplies one number of a stored record (`field` of the record at index `index` of branch
 * `branch`) by (1 + rel); with `digest`, recomputes the trajectory digest as a careful forger would.
 */
export function editRecord(nb: Nb, branch: number, field: string, index: number, rel: number, digest: boolean): number {
  const t = ledgerCell(nb).metadata.stepwell.branches[branch].trajectory;
  const values = column(t[field]);
  values[index] *= 1 + rel;
  t[field] = base64(values);
  if (digest) t.digest = trajectoryDigest(t);
  return column(t.step)[index];
}

/**
 * A notebook `kiln.ipynb` in `dir` whose one stepwell cell reads `kiln-firings.csv` and
 * `kiln-start.safetensors` beside it (copied from demo-notebooks/kiln): branch `main` stepped 30
 * times, `standardized` (data.standardize, from step 0) 30 times, and `slower` (lr 0.005) forked
 * from main at step 12 and stepped to 24; the ledger is built by the ledger layer as the worker
 * builds it, with the data hash.
 */
export function kilnNotebook(dir: string): { path: string; spec: string; dataHash: string } {
  for (const f of ['kiln-firings.csv', 'kiln-start.safetensors']) copyFileSync(join(KILN, f), join(dir, f));
  const spec = `%%stepwell\n${readFileSync(join(KILN, 'kiln-glaze.yaml'), 'utf8')}`;
  const files = new Map(['kiln-firings.csv', 'kiln-start.safetensors'].map((f) => [f, new Uint8Array(readFileSync(join(dir, f)))]));
  const root = parseSpec(spec, 'auto', { files });
  if (!root.ok) throw new Error(root.errors.map((e) => e.message).join('; '));
  const g = Grove.create(root.experiment, { checkpointEvery: 8 });
  g.step('main', 30);
  const fork = (from: string, step: number, name: string, chain: Record<string, unknown>[]): void => {
    const e = patchChainExperiment(spec, chain as any, { files });
    if (!e.ok) throw new Error(e.errors.map((x) => x.message).join('; '));
    g.fork(from, step, name, e.experiment, chain[chain.length - 1]);
  };
  fork('main', 0, 'standardized', [{ 'data.standardize': true }]);
  g.step('standardized', 30);
  fork('main', 12, 'slower', [{ lr: 0.005 }]);
  g.step('slower', 12);
  const dataHash = root.experiment.setup.data?.origin?.hash as string;
  const ledger = buildLedger({
    engine: ENGINE_NAME,
    spec,
    seed: root.experiment.seed,
    parameterCount: g.session('main').objective.parameterCount,
    dataHash,
    savedAt: '2026-01-01T00:00:00.000Z',
    activeBranch: 'standardized',
    branches: g.names().map((name) => {
      const o = g.origin(name);
      const tip = g.tipState(name);
      return {
        name,
        parent: o === null ? undefined : { branch: o.parent, step: o.step },
        patch: o === null ? undefined : { ...o.patch },
        restart: o?.restart,
        trajectory: g.trajectory(name),
        checkpoints: g.checkpoints(name).map((c) => c.state).filter((s) => s.step < tip.step),
        head: tip
      };
    })
  });
  const nb: Nb = {
    nbformat: 4,
    nbformat_minor: 5,
    metadata: {},
    cells: [
      { cell_type: 'markdown', id: 'intro', source: '# Kiln glaze outcomes (invented)', metadata: {} },
      { cell_type: 'code', id: 'kiln', source: spec, metadata: { stepwell: ledger }, outputs: [] }
    ]
  };
  const path = join(dir, 'kiln.ipynb');
  writeNb(path, nb);
  return { path, spec, dataHash };
}

/** Edits one number of a data row of the kiln CSV (row `row` counting data rows from 0, column `col`). */
export function editCsv(dir: string, row: number, col: number, to: string): { was: string } {
  const file = join(dir, 'kiln-firings.csv');
  const lines = readFileSync(file, 'utf8').split('\n');
  const cells = lines[row + 1].split(',');
  const was = cells[col];
  cells[col] = to;
  lines[row + 1] = cells.join(',');
  writeFileSync(file, lines.join('\n'));
  return { was };
}
