/**
 * `stepwell verify NOTEBOOK`: the demo notebooks (stepped in Chromium, an engine independent of
 * Node's) verify bit-identical with exit 0; one number edited in a data row, a stored record or
 * the spec makes it exit non-zero naming what changed and the first differing step. The
 * expected values are the notebooks' own stored records (source: the demo notebooks as written
 * by `npx tsx demo-notebooks/make_demos.ts` in Debian's Chromium) and, for the kiln notebook,
 * the data files' bytes as the kiln scenario wrote them.
 */
import { unlinkSync, writeFileSync } from 'fs';
import { join } from 'path';
import { main } from '../../../src/cli/main';
import { EXIT_DIFFERS, EXIT_WITHIN, type NotebookCheck } from '../../../src/cli/verify';
import { decodeTrajectory, sha256Hex } from '../../../src/ledger';
import { column, demoCopy, editCsv, editRecord, kilnNotebook, ledgerCell, readNb, sourceOf, tempDir, writeNb, DEMOS } from './notebooks';

const GREENHOUSE = 'greenhouse-humidity-sensor.ipynb';
const PARCELS = 'parcel-sorter-plateau.ipynb';

/** Runs the CLI; returns exit code, stdout and stderr. */
async function cli(...args: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = '';
  let err = '';
  const code = await main(args, { write: (s: string) => (out += s) }, { write: (s: string) => (err += s) });
  return { code, out, err };
}

async function verifyJson(path: string, ...more: string[]): Promise<{ code: number; r: NotebookCheck }> {
  const { code, out, err } = await cli('verify', path, '--json', ...more);
  if (out === '') throw new Error(`no output (exit ${code}): ${err}`);
  return { code, r: JSON.parse(out) as NotebookCheck };
}

const dir = tempDir('verify');

describe('stepwell verify on the demo notebooks', () => {
  it.each([GREENHOUSE, PARCELS])('%s: every branch bit-identical, exit 0', async (name) => {
    const { code, r } = await verifyJson(join(DEMOS, name));
    expect(code).toBe(0);
    expect(r.verdict).toBe('bit-identical');
    expect(r.cells).toHaveLength(1);
    const c = r.cells[0];
    expect([c.spec.changed, c.data.changed, c.engine.changed, c.integrity, c.problems]).toEqual([false, false, false, [], []]);
    const stored = ledgerCell(readNb(join(DEMOS, name))).metadata.stepwell;
    expect(c.branches.map((b) => b.name)).toEqual(stored.branches.map((b: { name: string }) => b.name));
    expect(c.branches.length).toBeGreaterThanOrEqual(2);
    for (const b of c.branches) {
      expect([b.name, b.match, b.maxRelDiff]).toEqual([b.name, 'bit-identical', 0]);
      // Every stored record and state was compared: the tip's fingerprint is the ledger's head.
      const s = stored.branches.find((x: { name: string }) => x.name === b.name);
      expect(b.recordedFingerprint).toBe(s.head.fingerprint);
      expect(b.replayedFingerprint).toBe(s.head.fingerprint);
      expect(b.checkpoints).toEqual([...s.checkpoints.map((x: { step: number }) => x.step).filter((st: number) => st >= (b.forkStep ?? 0)), s.head.step]);
      expect(b.records).toBe(b.steps + 1);
    }
  });

  it('prints one line per branch and a closing verdict', async () => {
    const { code, out } = await cli('verify', join(DEMOS, GREENHOUSE));
    expect(code).toBe(0);
    expect(out).toMatch(/^ {2}main +bit-identical \(14 steps: 15 records and \d+ states compared; fingerprint [0-9a-f]{12}\)$/m);
    expect(out).toMatch(/^ {2}lr=0\.662 +bit-identical \(from main at step 0, 60 steps/m);
    expect(out.trim().split('\n').pop()).toBe('verified: 2 branches in 1 cell bit-identical');
  });
});

describe('one number edited', () => {
  it('in a data row of the spec: the spec changed (which line), differs from step 0 in the loss of record 0', async () => {
    const path = demoCopy(GREENHOUSE, dir, (nb) => {
      const c = ledgerCell(nb);
      c.source = sourceOf(c).replace('[-0.273, -0.460]', '[-0.273, -0.461]');
    }, 'data-row.ipynb');
    const { code, r } = await verifyJson(path);
    expect(code).toBe(EXIT_DIFFERS);
    const c = r.cells[0];
    expect(c.spec.changed).toBe(true);
    expect(c.spec.lines).toHaveLength(1);
    expect(c.spec.lines[0].recorded).toContain('[-0.273, -0.460]');
    expect(c.spec.lines[0].current).toContain('[-0.273, -0.461]');
    for (const b of c.branches) expect([b.name, b.match, b.firstDifferingStep, b.firstDifference?.quantity, b.firstDifference?.where]).toEqual([b.name, 'differs', 0, 'loss', 'record']);
    const text = (await cli('verify', path)).out;
    expect(text).toContain('spec    CHANGED since the ledger was written');
    expect(text).toMatch(/line \d+: ".*\[-0\.273, -0\.460\].*" → ".*\[-0\.273, -0\.461\].*"/);
    expect(text).toMatch(/main +differs from step 0: the loss of stored record 0 is /);
  });

  it('the learning rate in the spec: differs from step 0, in the learning rate record 0 stores', async () => {
    const path = demoCopy(GREENHOUSE, dir, (nb) => {
      const c = ledgerCell(nb);
      c.source = sourceOf(c).replace('lr: 0.9', 'lr: 0.901');
    }, 'lr.ipynb');
    const { code, r } = await verifyJson(path);
    expect(code).toBe(EXIT_DIFFERS);
    const main_ = r.cells[0].branches.find((b) => b.name === 'main');
    // The start is the same (same seed, data, model), but record 0 already states the learning rate in effect.
    expect(main_?.firstDifference).toEqual({ step: 0, quantity: 'lr', where: 'record', recorded: 0.9, replayed: 0.901, relative: expect.closeTo(0.001 / 0.901, 15) });
    // The branch lr=0.662 sets its own lr: its weights replay bit for bit, only record 0 (shared with main) differs.
    expect(r.cells[0].branches.find((b) => b.name === 'lr=0.662')).toMatchObject({ match: 'within-tolerance', maxRelDiff: 0, firstDifferingStep: 0, firstDifference: { quantity: 'lr' } });
    expect(r.cells[0].verdict).toBe('differs');
  });

  it('of a stored record, digest left alone: the ledger says it was edited, the replay names the record', async () => {
    let step = -1;
    const path = demoCopy(PARCELS, dir, (nb) => {
      step = editRecord(nb, 1, 'loss', 40, 1e-9, false);
    }, 'record.ipynb');
    const { code, r } = await verifyJson(path);
    expect(code).toBe(EXIT_DIFFERS);
    const c = r.cells[0];
    expect(c.integrity).toEqual([expect.stringContaining('branches[1].trajectory.digest: does not match the columns (the records were edited or damaged)')]);
    const b = c.branches[1];
    expect([b.firstDifferingStep, b.firstDifference?.quantity, b.firstDifference?.where]).toEqual([step, 'loss', 'record']);
    // Only the record was touched: every compared state matches.
    expect(b.maxRelDiff).toBe(0);
    expect(b.firstDifference?.relative).toBeCloseTo(1e-9, 12);
  });

  it('of a stored record, digest recomputed (a careful forgery): the replay still names the record', async () => {
    let step = -1;
    const path = demoCopy(PARCELS, dir, (nb) => {
      step = editRecord(nb, 0, 'gradNorm', 7, 1e-6, true);
    }, 'forged.ipynb');
    const { code, r } = await verifyJson(path);
    expect(code).toBe(EXIT_WITHIN);
    const c = r.cells[0];
    expect(c.integrity).toEqual([]);
    expect(c.branches[0]).toMatchObject({ match: 'within-tolerance', firstDifferingStep: step, firstDifference: { quantity: 'gradNorm', where: 'record' } });
    const text = (await cli('verify', path)).out;
    expect(text).toContain(`not bit for bit from step ${step}: the gradient norm of stored record ${step} is`);
  });

  it('a stored state: the fingerprint check catches it and the replay names the checkpoint', async () => {
    const path = demoCopy(PARCELS, dir, (nb) => {
      const b = ledgerCell(nb).metadata.stepwell.branches[0];
      const c = b.checkpoints[1];
      const w = column(c.state.params);
      w[3] += 1e-3;
      c.state.params = Buffer.from(new Uint8Array(w.buffer)).toString('base64');
    }, 'state.ipynb');
    const { code, r } = await verifyJson(path);
    expect(code).toBe(EXIT_DIFFERS);
    const stepOf = ledgerCell(readNb(path)).metadata.stepwell.branches[0].checkpoints[1].step;
    expect(r.cells[0].integrity).toEqual([expect.stringContaining('branches[0].checkpoints[1].fingerprint: does not match the state it describes')]);
    // The stored fingerprint is the replay's: the weights themselves name the edit.
    expect(r.cells[0].branches[0]).toMatchObject({ match: 'differs', firstDifferingStep: stepOf, firstDifference: { quantity: 'weights', where: 'checkpoint' } });
  });

  it("in the ledger's own copy of the spec: the spec hash no longer matches, the cell's text replays bit for bit", async () => {
    const path = demoCopy(GREENHOUSE, dir, (nb) => {
      const l = ledgerCell(nb).metadata.stepwell;
      l.spec = l.spec.replace('lr: 0.9', 'lr: 0.8');
    }, 'ledger-spec.ipynb');
    const { code, r } = await verifyJson(path);
    expect(code).toBe(EXIT_DIFFERS);
    expect(r.cells[0].integrity).toEqual([expect.stringContaining('specHash: does not match the SHA-256 of spec')]);
    expect(r.cells[0].branches.map((b) => b.match)).toEqual(['bit-identical', 'bit-identical']);
  });

  it('a data file (kiln: one reading of the CSV): names the changed data hash and the first differing step', async () => {
    const d = tempDir('verify-kiln');
    const { path, dataHash } = kilnNotebook(d);
    const before = await verifyJson(path);
    expect(before.code).toBe(0);
    expect(before.r.cells[0].data).toMatchObject({ recordedHash: dataHash, currentHash: dataHash, changed: false });
    expect(before.r.cells[0].branches.map((b) => [b.name, b.match])).toEqual([['main', 'bit-identical'], ['standardized', 'bit-identical'], ['slower', 'bit-identical']]);
    expect(editCsv(d, 2, 0, '1235.1').was).toBe('1235.0');
    const { code, r } = await verifyJson(path);
    expect(code).toBe(EXIT_DIFFERS);
    const c = r.cells[0];
    expect(c.data.changed).toBe(true);
    expect(c.data.recordedHash).toBe(dataHash);
    expect(c.data.currentHash).not.toBe(dataHash);
    expect(c.data.files.map((f) => f.name)).toEqual(['kiln-firings.csv', 'kiln-start.safetensors']);
    for (const b of c.branches) expect([b.name, b.firstDifferingStep, b.firstDifference?.quantity]).toEqual([b.name, 0, 'loss']);
    const text = (await cli('verify', path)).out;
    expect(text).toContain(`data    CHANGED since the ledger was written: data hash ${dataHash} in the ledger, ${c.data.currentHash} now`);
    expect(text).toMatch(/standardized +differs from step 0: the loss of stored record 0/);
  });
});

describe('what cannot be verified, and bad input', () => {
  it('a missing data file, a damaged ledger: the cell is named and the exit status is non-zero', async () => {
    const d = tempDir('verify-missing');
    const { path } = kilnNotebook(d);
    unlinkSync(join(d, 'kiln-start.safetensors'));
    const { code, r } = await verifyJson(path);
    expect(code).toBe(EXIT_DIFFERS);
    expect(r.cells[0].verdict).toBe('unreadable');
    expect(r.cells[0].problems).toEqual([`cell 1 (kiln): model.weights.file: cannot read 'kiln-start.safetensors' (${join(d, 'kiln-start.safetensors')}, relative to the notebook's folder): ENOENT`]);
    writeFileSync(join(d, 'kiln-start.safetensors'), '');
    expect((await verifyJson(path)).r.cells[0].problems).toEqual(['cell 1 (kiln): the spec: kiln-start.safetensors: is too short to be a safetensors file (no 8-byte header size)']);
    const broken = demoCopy(PARCELS, dir, (nb) => {
      ledgerCell(nb).metadata.stepwell.branches[0].head = 'nothing';
    }, 'broken.ipynb');
    const b = await verifyJson(broken);
    expect(b.code).toBe(EXIT_DIFFERS);
    expect(b.r.cells[0].problems[0]).toMatch(/^cell 2 \(ps-sorter\): the ledger cannot be read: branches\[0\]\.head/);
  });

  it('another engine version is reported; the replay decides', async () => {
    const path = demoCopy(GREENHOUSE, dir, (nb) => {
      ledgerCell(nb).metadata.stepwell.engine = 'stepwell 0.1.0';
    }, 'engine.ipynb');
    const { code, r } = await verifyJson(path);
    expect(r.cells[0].engine).toEqual({ recorded: 'stepwell 0.1.0', current: 'stepwell 0.2.0', changed: true });
    expect(code).toBe(0);
    expect((await cli('verify', path)).out).toContain('engine  written by stepwell 0.1.0, replayed by stepwell 0.2.0');
  });

  it('--cell, not a notebook, no ledger: exit 2 with a message naming the file and the cell', async () => {
    const gh = join(DEMOS, GREENHOUSE);
    expect((await verifyJson(gh, '--cell', '2')).code).toBe(0);
    expect(await cli('verify', gh, '--cell', '1')).toMatchObject({ code: 2, err: expect.stringContaining('--cell 1: cell 1 (gh-kernel) is a code cell without a Stepwell ledger; cells with a ledger: 2') });
    expect(await cli('verify', gh, '--cell', '9')).toMatchObject({ code: 2, err: expect.stringContaining('--cell 9: the notebook has 5 cells (0 to 4)') });
    const notJson = join(dir, 'not.ipynb');
    writeFileSync(notJson, '{"cells": [');
    expect(await cli('verify', notJson)).toMatchObject({ code: 2, err: expect.stringContaining('not a notebook: the file is not JSON') });
    const empty = join(dir, 'empty.ipynb');
    writeNb(empty, { nbformat: 4, nbformat_minor: 5, metadata: {}, cells: [{ cell_type: 'code', id: 'a', source: '%%stepwell\nseed: 1\n', metadata: {}, outputs: [] }] });
    expect(await cli('verify', empty)).toMatchObject({ code: 2, err: expect.stringContaining('no stepwell cell with a ledger (cell 0 (a) was never stepped)') });
    expect(await cli('verify', join(dir, 'absent.ipynb'))).toMatchObject({ code: 2, err: expect.stringContaining("cannot read notebook '") });
  });

  it('--max-updates bounds the work before any replay runs', async () => {
    const { code, r } = await verifyJson(join(DEMOS, PARCELS), '--max-updates', '150');
    expect(code).toBe(EXIT_DIFFERS);
    expect(r.cells[0].problems).toEqual(['cell 2 (ps-sorter): replaying every branch takes 200 updates, more than --max-updates 150; raise it to verify this cell']);
  });

  it('the spec hash it reports is the SHA-256 of the cell text (source: sha256sum over the same bytes, via @noble/hashes)', async () => {
    const nb = readNb(join(DEMOS, GREENHOUSE));
    const { r } = await verifyJson(join(DEMOS, GREENHOUSE));
    expect(r.cells[0].spec.currentHash).toBe(sha256Hex(sourceOf(ledgerCell(nb))));
    // The count of stored records the replay compared equals what the ledger decodes to.
    const l = ledgerCell(nb).metadata.stepwell;
    expect(r.cells[0].branches[0].records).toBe(decodeTrajectory(l.branches[0].trajectory).length);
  });
});
