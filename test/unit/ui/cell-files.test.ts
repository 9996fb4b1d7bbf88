/**
 * A stepwell cell whose spec names a CSV data file and a safetensors weights file, driven through
 * the cell controller with the real engine host in-process (messages cloned, file buffers
 * transferred, as across a Worker boundary): the files are read through the host's `readFiles`,
 * reading problems land at the spec key that names the file (with its line), the ledger records
 * the data hash the CLI computes from the same files on disk, and a file edited or replaced after
 * saving is reported, not replayed.
 */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { CellController } from '../../../src/ui/controller';
import type { CellHost, FilesRead } from '../../../src/ui/ports';
import { DEFAULT_SETTINGS } from '../../../src/ui/ports';
import { ledgerGlue } from '../../../src/ui/ledger-glue';
import { checkSpec } from '../../../src/plugin/registry';
import { EngineClient } from '../../../src/worker/client';
import { inProcessPort } from '../../../src/worker/in-process';
import { realCore } from '../../../src/worker/core-adapter';
import { parseSpec } from '../../../src/experiment';
import { Session } from '../../../src/core/session';

const DIR = join(__dirname, '../../../demo-notebooks/kiln');
const SPEC = readFileSync(join(DIR, 'kiln-glaze.yaml'), 'utf8');
const disk = (name: string): Uint8Array => new Uint8Array(readFileSync(join(DIR, name)));

interface FileCell extends CellHost {
  source: string;
  metadata: unknown;
  /** The folder next to the notebook: name → bytes (a fresh copy is handed out at each read). */
  folder: Map<string, Uint8Array>;
  /** Every buffer handed to the controller, to see that it moved to the engine. */
  handed: Uint8Array[];
  reads: string[][];
  /** Summaries of the outputs written (null: the error output of a cell without a session). */
  outputsWritten: (object | null)[];
}

function fileCell(source = SPEC): FileCell {
  const cell: FileCell = {
    source,
    metadata: undefined,
    folder: new Map(['kiln-firings.csv', 'kiln-start.safetensors'].map((n) => [n, disk(n)])),
    handed: [],
    reads: [],
    outputsWritten: [],
    readFiles: async (names) => {
      cell.reads.push([...names]);
      const out: FilesRead = { files: new Map(), problems: new Map() };
      for (const n of names) {
        const b = cell.folder.get(n);
        if (b === undefined) out.problems.set(n, `not found: there is no '${n}' (names are relative to the notebook's folder, the Jupyter root)`);
        else {
          const copy = b.slice();
          cell.handed.push(copy);
          out.files.set(n, copy);
        }
      }
      return out;
    },
    cellId: () => 'cell-1',
    findRecord: () => null,
    writeRecord: () => undefined,
    readSource: () => cell.source,
    readLedger: () => (cell.metadata === undefined ? undefined : JSON.parse(JSON.stringify(cell.metadata))),
    writeLedger: (v) => {
      cell.metadata = JSON.parse(JSON.stringify(v));
    },
    writeOutputs: (summary) => {
      cell.outputsWritten.push(summary);
    }
  };
  return cell;
}

function controller(cell: FileCell): CellController {
  return new CellController({
    host: cell,
    engine: () => new EngineClient(inProcessPort(realCore)),
    ledger: ledgerGlue,
    checkSpec,
    settings: () => ({ ...DEFAULT_SETTINGS, checkpointEvery: 5, checkpointCap: 6 })
  });
}

/** Line (1-based) of the first line of `text` containing `needle`. */
const lineOf = (text: string, needle: string): number => text.split('\n').findIndex((l) => l.includes(needle)) + 1;

describe('a cell with data and weights files', () => {
  it('reads them through the host, moves their buffers to the engine, and records the CLI\'s data hash', async () => {
    const cell = fileCell();
    const c = controller(cell);
    expect(c.state.problems).toEqual([]); // the live check does not read files
    expect(await c.run()).toBe(true);
    expect(cell.reads).toEqual([['kiln-firings.csv', 'kiln-start.safetensors']]);
    // Transferred, not copied: the page's buffers are detached after the load request.
    expect(cell.handed).toHaveLength(2);
    for (const b of cell.handed) expect(b.byteLength).toBe(0);
    expect(c.state.summary?.setup).toContain('120 rows');
    expect(await c.step(12)).toBe(true);
    // The same files read from disk as the CLI does give the hash the ledger holds.
    // common practice (no single source): one computation through two paths (the app's worker, the CLI) must agree bit for bit
    const cli = parseSpec(SPEC, 'auto', { files: new Map([['kiln-firings.csv', disk('kiln-firings.csv')], ['kiln-start.safetensors', disk('kiln-start.safetensors')]]) });
    if (!cli.ok) throw new Error(cli.errors[0].message);
    const ledger = cell.metadata as { dataHash?: string };
    expect(ledger.dataHash).toMatch(/^[0-9a-f]{64}$/);
    expect(ledger.dataHash).toBe(cli.experiment.setup.data?.origin?.hash);
    // And the trajectory is the CLI's: 12 steps of a Node session over the same experiment.
    const s = Session.create(cli.experiment);
    s.step(12);
    expect(c.state.summary?.fingerprint).toBe(s.fingerprint());
    const fingerprint = c.state.summary?.fingerprint;
    c.dispose();

    // Reopened: the view shows the ledger without reading anything; the first action reads the files again.
    const d = controller(cell);
    expect(d.state.summary?.step).toBe(12);
    expect(d.state.summary?.fingerprint).toBe(fingerprint);
    expect(cell.reads).toHaveLength(1);
    expect(await d.step(3)).toBe(true);
    expect(cell.reads).toHaveLength(2);
    expect(d.state.summary?.step).toBe(15);
    d.dispose();
  });

  it('puts a missing file, a file of the wrong format and a file that does not fit the model at the key that names it', async () => {
    const missing = fileCell();
    missing.folder.delete('kiln-firings.csv');
    const c = controller(missing);
    expect(await c.run()).toBe(false);
    expect(c.state.problems).toHaveLength(1);
    expect(c.state.problems[0]).toMatchObject({ path: 'data.file', line: lineOf(SPEC, 'file: kiln-firings.csv') });
    expect(c.state.problems[0].message).toContain("kiln-firings.csv was not read: not found: there is no 'kiln-firings.csv'");
    // No session yet: the error output is written, so the cell shows the widget with the problem.
    expect(missing.outputsWritten).toEqual([null]);
    // Writing that output changes the cell (not its text): the debounced re-check keeps the engine's problem.
    c.sourceChanged();
    expect(c.state.problems.map((p) => p.path)).toEqual(['data.file']);
    // An edit of the text drops it (the live check does not read files).
    missing.source = SPEC.replace('seed: 17', 'seed: 18');
    c.sourceChanged();
    expect(c.state.problems).toEqual([]);
    c.dispose();

    const garbled = fileCell();
    garbled.folder.set('kiln-start.safetensors', new TextEncoder().encode('peak_c,glaze\n1,good\n'));
    const g = controller(garbled);
    expect(await g.run()).toBe(false);
    expect(g.state.problems).toHaveLength(1);
    expect(g.state.problems[0]).toMatchObject({ path: 'model.weights.file', line: lineOf(SPEC, 'kiln-start.safetensors') });
    expect(g.state.problems[0].message).toMatch(/kiln-start\.safetensors/);
    g.dispose();

    const short = fileCell();
    // The logger's file without its humidity column (the spec's features name it).
    const csv = new TextDecoder().decode(disk('kiln-firings.csv')).split('\n').map((l) => l.split(',').filter((_, i) => i !== 3).join(',')).join('\n');
    short.folder.set('kiln-firings.csv', new TextEncoder().encode(csv));
    const s = controller(short);
    expect(await s.run()).toBe(false);
    expect(s.state.problems).toHaveLength(1);
    expect(s.state.problems[0]).toMatchObject({ path: 'data.file', line: lineOf(SPEC, 'file: kiln-firings.csv') });
    expect(s.state.problems[0].message).toContain('humidity_pct');
    s.dispose();
  });

  it('reports a data file edited after saving at data.file instead of replaying the saved steps on it', async () => {
    const cell = fileCell();
    const c = controller(cell);
    expect(await c.run()).toBe(true);
    expect(await c.step(5)).toBe(true);
    c.dispose();
    // One reading changed in the logger's file (1207.7 °C → 1207.8 °C on the first row).
    const text = new TextDecoder().decode(cell.folder.get('kiln-firings.csv'));
    expect(text).toContain('1207.7,');
    cell.folder.set('kiln-firings.csv', new TextEncoder().encode(text.replace('1207.7,', '1207.8,')));
    const d = controller(cell);
    expect(d.state.summary?.step).toBe(5); // the stored view still opens
    expect(await d.step(1)).toBe(false);
    expect(d.state.summary?.step).toBe(5);
    expect(d.state.problems).toHaveLength(1);
    expect(d.state.problems[0]).toMatchObject({ path: 'data.file', line: lineOf(SPEC, 'file: kiln-firings.csv') });
    expect(d.state.problems[0].message).toMatch(/kiln-firings\.csv changed since this session was saved: the ledger recorded data hash [0-9a-f]{12}…, the data now hash to [0-9a-f]{12}…/);
    expect(d.state.notice?.level).toBe('error');
    expect(d.state.notice?.text).toContain('Reset to start over');
    expect(d.state.filesBlocked).toBe(true); // so the widget keeps Reset enabled
    // Reset starts over from the data as they are now (after the confirmation).
    expect(await d.reset(true)).toBe(true);
    expect(d.state.summary?.step).toBe(0);
    expect(d.state.problems).toEqual([]);
    expect(d.state.filesBlocked).toBe(false);
    d.dispose();
  });

  it('reports a weights file replaced after saving at model.weights.file', async () => {
    const cell = fileCell();
    const c = controller(cell);
    expect(await c.run()).toBe(true);
    expect(await c.step(2)).toBe(true);
    c.dispose();
    const w = cell.folder.get('kiln-start.safetensors') as Uint8Array;
    const changed = w.slice();
    changed[changed.length - 1] ^= 1; // the lowest bits of the last float of the last tensor
    cell.folder.set('kiln-start.safetensors', changed);
    const d = controller(cell);
    expect(await d.step(1)).toBe(false);
    expect(d.state.problems).toHaveLength(1);
    expect(d.state.problems[0]).toMatchObject({ path: 'model.weights.file', line: lineOf(SPEC, 'kiln-start.safetensors') });
    expect(d.state.problems[0].message).toContain('kiln-start.safetensors changed since this session was saved');
    d.dispose();
  });

  it("reads a file only a fork's patch names, and only that one", async () => {
    const cell = fileCell();
    const text = new TextDecoder().decode(cell.folder.get('kiln-firings.csv'));
    cell.folder.set('kiln-firings-june.csv', new TextEncoder().encode(text.replace('1207.7,', '1215.0,')));
    const c = controller(cell);
    expect(await c.run()).toBe(true);
    expect(await c.step(3)).toBe(true);
    // A setup change forks at step 0 (a restart) from the other month's log.
    expect(await c.forkBranch({ atStep: 0, set: { 'data.file': 'kiln-firings-june.csv' }, name: 'june' })).toBe(true);
    expect(cell.reads).toEqual([['kiln-firings.csv', 'kiln-start.safetensors'], ['kiln-firings-june.csv']]);
    expect(await c.step(2)).toBe(true);
    expect(c.state.summary?.branch).toBe('june');
    expect(c.state.summary?.branches.map((b) => [b.name, b.tip])).toEqual([['main', 3], ['june', 2]]);
    // The same fork from the CLI's reading of the files gives the same state.
    // common practice (no single source): one computation through two paths must agree bit for bit
    const june = parseSpec(SPEC.replace('file: kiln-firings.csv', 'file: kiln-firings-june.csv'), 'auto', { files: new Map([['kiln-firings-june.csv', cell.folder.get('kiln-firings-june.csv') as Uint8Array], ['kiln-start.safetensors', disk('kiln-start.safetensors')]]) });
    if (!june.ok) throw new Error(june.errors[0].message);
    const s = Session.create(june.experiment);
    s.step(2);
    expect(c.state.summary?.fingerprint).toBe(s.fingerprint());
    c.dispose();
  });

  it('says so when the host reads no files', async () => {
    const cell = fileCell();
    delete (cell as Partial<FileCell>).readFiles;
    const c = controller(cell);
    expect(await c.run()).toBe(false);
    // In the order the spec writes them: the weights file comes first in the kiln spec.
    expect(c.state.problems.map((p) => p.path)).toEqual(['model.weights.file', 'data.file']);
    expect(c.state.problems[0].message).toContain('this notebook host reads no files');
    c.dispose();
  });
});
