/**
 * The files each branch read, recorded in the ledger by the app's path (the cell controller over
 * the real engine host) and checked by `stepwell verify`: a branch whose patch names another data
 * file records that file's SHA-256; replacing it — even by a file with the same numbers in other
 * bytes, which the data hash and the replay cannot see — is reported at the key that names it.
 */
import { createHash } from 'node:crypto';
import { copyFileSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { main } from '../../../src/cli/main';
import { EXIT_DIFFERS, type NotebookCheck } from '../../../src/cli/verify';
import { CellController } from '../../../src/ui/controller';
import type { CellHost, FilesRead } from '../../../src/ui/ports';
import { DEFAULT_SETTINGS } from '../../../src/ui/ports';
import { ledgerGlue } from '../../../src/ui/ledger-glue';
import { checkSpec } from '../../../src/plugin/registry';
import { EngineClient } from '../../../src/worker/client';
import { inProcessPort } from '../../../src/worker/in-process';
import { realCore } from '../../../src/worker/core-adapter';
import { tempDir } from './notebooks';

const KILN = join(__dirname, '../../../demo-notebooks/kiln');
const SPEC = `%%stepwell\n${readFileSync(join(KILN, 'kiln-glaze.yaml'), 'utf8')}`;
// source: Node's crypto (OpenSSL SHA-256), not the hash the code under test uses
const sha256 = (b: Uint8Array): string => createHash('sha256').update(b).digest('hex');

async function cli(...args: string[]): Promise<{ code: number; out: string }> {
  let out = '';
  const code = await main(args, { write: (s: string) => (out += s) }, { write: () => undefined });
  return { code, out };
}

/** A notebook in `dir` whose cell was stepped, with a branch (from step 0) reading another CSV. */
async function notebookWithDataBranch(dir: string): Promise<string> {
  for (const f of ['kiln-firings.csv', 'kiln-start.safetensors']) copyFileSync(join(KILN, f), join(dir, f));
  // the branch's data: the same header, the first 80 rows
  const lines = readFileSync(join(KILN, 'kiln-firings.csv'), 'utf8').split('\n');
  writeFileSync(join(dir, 'kiln-firings-first80.csv'), lines.slice(0, 81).join('\n') + '\n');
  let ledger: unknown;
  const host: CellHost = {
    readSource: () => SPEC,
    readLedger: () => (ledger === undefined ? undefined : JSON.parse(JSON.stringify(ledger))),
    writeLedger: (v) => (ledger = JSON.parse(JSON.stringify(v))),
    writeOutputs: () => undefined,
    cellId: () => 'kiln',
    findRecord: () => null,
    writeRecord: () => undefined,
    readFiles: async (names) => {
      const out: FilesRead = { files: new Map(), problems: new Map() };
      for (const n of names) out.files.set(n, new Uint8Array(readFileSync(join(dir, n))));
      return out;
    }
  };
  const ctl = new CellController({ host, engine: () => new EngineClient(inProcessPort(realCore)), ledger: ledgerGlue, checkSpec, settings: () => DEFAULT_SETTINGS });
  const must = (ok: boolean, what: string): void => {
    if (!ok) throw new Error(`${what} failed: ${ctl.state.notice?.text ?? ''}`);
  };
  must(await ctl.run(), 'run');
  must(await ctl.step(6), 'step');
  must(await ctl.forkBranch({ atStep: 0, set: { 'data.file': 'kiln-firings-first80.csv' }, name: 'first80' }), 'fork');
  must(await ctl.step(6), 'step the branch');
  ctl.dispose();
  const path = join(dir, 'kiln.ipynb');
  writeFileSync(path, JSON.stringify({ cells: [{ cell_type: 'code', id: 'kiln', source: SPEC, metadata: { stepwell: ledger }, outputs: [], execution_count: null }], metadata: {}, nbformat: 4, nbformat_minor: 5 }));
  return path;
}

describe('the files each branch read', () => {
  const dir = tempDir('branch-files');
  let path = '';
  beforeAll(async () => {
    path = await notebookWithDataBranch(dir);
  }, 60_000);

  it('are recorded per branch with the SHA-256 of their bytes', () => {
    const nb = JSON.parse(readFileSync(path, 'utf8')) as { cells: { metadata: { stepwell: { branches: { name: string; files?: { name: string; bytes: number; sha256: string }[] }[] } } }[] };
    const branches = nb.cells[0].metadata.stepwell.branches;
    expect(branches.map((b) => b.name)).toEqual(['main', 'first80']);
    const disk = (n: string): { name: string; bytes: number; sha256: string } => {
      const b = new Uint8Array(readFileSync(join(dir, n)));
      return { name: n, bytes: b.length, sha256: sha256(b) };
    };
    expect(branches[0].files).toEqual([disk('kiln-firings.csv'), disk('kiln-start.safetensors')]);
    expect(branches[1].files).toEqual([disk('kiln-firings-first80.csv'), disk('kiln-start.safetensors')]);
  });

  it('verify: unchanged files pass, bit-identical', async () => {
    const { code, out } = await cli('verify', path, '--json');
    const r = JSON.parse(out) as NotebookCheck;
    expect(code).toBe(0);
    expect(r.cells).toHaveLength(1);
    expect(r.cells[0].branchFiles).toHaveLength(4);
    expect(r.cells[0].branchFiles.filter((f) => f.changed)).toEqual([]);
    expect(r.cells[0].verdict).toBe('bit-identical');
  });

  it('verify: the branch\'s file replaced by the same numbers in other bytes (LF for CRLF) is named at data.file of that branch', async () => {
    const file = join(dir, 'kiln-firings-first80.csv');
    const was = readFileSync(file);
    // the kiln logger writes CRLF; the same rows with LF line ends
    const lf = Buffer.from(was.toString('utf8').replace(/\r\n/g, '\n'), 'utf8');
    expect(lf.length).toBeLessThan(was.length);
    writeFileSync(file, lf);
    try {
      const { code, out } = await cli('verify', path, '--json');
      const r = JSON.parse(out) as NotebookCheck;
      expect(code).toBe(EXIT_DIFFERS);
      const changed = r.cells[0].branchFiles.filter((f) => f.changed);
      expect(changed).toEqual([{ branch: 'first80', name: 'kiln-firings-first80.csv', keys: ['data.file'], recorded: sha256(new Uint8Array(was)), current: sha256(new Uint8Array(lf)), changed: true }]);
      // the numbers are the same: both replays stay bit-identical; only the file hash sees the change
      expect(r.cells[0].problems).toEqual([]);
      expect(r.cells[0].branches.map((b) => b.match)).toEqual(['bit-identical', 'bit-identical']);
      expect(r.cells[0].verdict).toBe('differs');
      const text = (await cli('verify', path)).out;
      expect(text).toContain(`files   CHANGED: branch 'first80' read 'kiln-firings-first80.csv' (data.file) with sha256 ${sha256(new Uint8Array(was)).slice(0, 12)}…; it now has sha256 ${sha256(new Uint8Array(lf)).slice(0, 12)}…`);
    } finally {
      writeFileSync(file, was);
    }
  });

  it('verify: a corrupted weights file is named for every branch that read it', async () => {
    const file = join(dir, 'kiln-start.safetensors');
    const was = readFileSync(file);
    const bad = Buffer.from(was);
    bad[bad.length - 1] ^= 0x40; // one bit of the last float
    writeFileSync(file, bad);
    try {
      const { code, out } = await cli('verify', path, '--json');
      const r = JSON.parse(out) as NotebookCheck;
      expect(code).toBe(EXIT_DIFFERS);
      const changed = r.cells[0].branchFiles.filter((f) => f.changed);
      expect(changed).toHaveLength(2);
      expect(changed.map((f) => [f.branch, f.name, f.keys])).toEqual([['main', 'kiln-start.safetensors', ['model.weights.file']], ['first80', 'kiln-start.safetensors', ['model.weights.file']]]);
    } finally {
      writeFileSync(file, was);
    }
  });
});
