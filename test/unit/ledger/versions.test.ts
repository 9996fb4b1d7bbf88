/**
 * Every ledger version released on main has fixtures written by its own code (`v<N>/`, each with
 * a README naming the fingerprints that code printed), and today's code reads each of them:
 * migration to the current version, validation, decoding, resuming every branch in the engine
 * host at the stored fingerprints, stepping on and saving as the current version, and a replay
 * from the seed — bit-identical when the ledger's engine is today's (version 1 was written by
 * Stepwell 0.1, whose arithmetic depended on the JavaScript engine: its replay differs at step 0,
 * as `migrate-v1.test.ts` states). A new version must add its folder: this test fails until it does.
 */
import { existsSync, readdirSync, readFileSync, writeFileSync } from 'fs';
import { join } from 'path';
import { ENGINE_NAME } from '../../../src/core/engine';
import { patchChainExperiment } from '../../../src/experiment/patch';
import { groveFromLedger, LEDGER_VERSION, validateLedger } from '../../../src/ledger';
import { EngineHost } from '../../../src/worker/engine-host';
import { realCore } from '../../../src/worker/core-adapter';
import type { EngineReply } from '../../../src/worker/protocol';
import { main } from '../../../src/cli/main';
import { tempDir } from '../cli/notebooks';

const versions = Array.from({ length: LEDGER_VERSION }, (_, i) => i + 1);
const fixtures = versions.flatMap((v) => {
  const dir = join(__dirname, `v${v}`);
  return existsSync(dir) ? readdirSync(dir).filter((f) => f.endsWith('.json')).map((f) => ({ v, file: f, path: join(dir, f) })) : [];
});
const raw = (path: string): Record<string, unknown> => JSON.parse(readFileSync(path, 'utf8'));

describe('ledger versions', () => {
  it.each(versions)('version %i has fixtures written by its own code, with a README naming their fingerprints', (v) => {
    const dir = join(__dirname, `v${v}`);
    expect(existsSync(join(dir, 'README.md'))).toBe(true);
    const mine = fixtures.filter((f) => f.v === v);
    expect(mine.length).toBeGreaterThanOrEqual(1);
    const readme = readFileSync(join(dir, 'README.md'), 'utf8');
    for (const f of mine) {
      expect(raw(f.path).version).toBe(v);
      expect(readme).toContain(f.file);
      // At least one head fingerprint of each fixture is the one its code printed (README).
      const heads = (raw(f.path).branches as { head: { fingerprint: string } }[]).map((b) => b.head.fingerprint);
      expect(heads.some((h) => readme.includes(h))).toBe(true);
    }
  });

  it.each(fixtures.map((f) => [`v${f.v}/${f.file}`, f] as const))('%s: migrates, validates, resumes at its fingerprints, steps on and saves as the current version', async (_n, f) => {
    const value = raw(f.path);
    const checked = validateLedger(value);
    if (!checked.ok) throw new Error(checked.errors.join('; '));
    expect(checked.ledger.version).toBe(LEDGER_VERSION);
    const stored = (value.branches as { name: string; head: { step: number; fingerprint: string }; cursor?: number }[]).map((b) => ({ name: b.name, fp: b.head.fingerprint }));
    const replies: EngineReply[] = [];
    const host = new EngineHost(realCore, (r) => replies.push(structuredClone(r)));
    await host.receive({ id: 1, kind: 'load', specText: checked.ledger.spec, checkpointEvery: 4, resume: value });
    const ready = replies[0];
    if (ready.kind !== 'ready') throw new Error(`expected ready, got ${JSON.stringify(ready)}`);
    expect(ready.summary.branches.map((b) => b.name)).toEqual(stored.map((b) => b.name));
    await host.receive({ id: 2, kind: 'step', n: 2 });
    await host.receive({ id: 3, kind: 'ledger', specText: checked.ledger.spec, checkpointCap: 6 });
    const saved = replies.find((r) => r.id === 3);
    if (saved?.kind !== 'ledger') throw new Error('no ledger');
    const again = validateLedger(JSON.parse(JSON.stringify(saved.value)));
    if (!again.ok) throw new Error(again.errors.join('; '));
    expect(again.ledger.version).toBe(LEDGER_VERSION);
    // Every branch the active one did not step keeps its head fingerprint.
    const active = ready.summary.branch;
    for (const b of stored.filter((x) => x.name !== active)) expect([b.name, again.ledger.branches.find((x) => x.name === b.name)?.head.fingerprint]).toEqual([b.name, b.fp]);
  });

  it.each(fixtures.map((f) => [`v${f.v}/${f.file}`, f] as const))('%s: replays from the seed (bit-identical when written by today’s engine)', (_n, f) => {
    const checked = validateLedger(raw(f.path));
    if (!checked.ok) throw new Error(checked.errors.join('; '));
    const l = checked.ledger;
    const { grove, branches } = groveFromLedger(l, (b, chain) => {
      const e = patchChainExperiment(l.spec, chain);
      if (!e.ok) throw new Error(`${b.name}: ${e.errors[0].message}`);
      return e.experiment;
    }, 4);
    expect(branches.length).toBe(l.branches.length);
    for (const b of branches) {
      const r = grove.replay(b.name);
      if (l.engine === ENGINE_NAME) expect([b.name, r.match]).toEqual([b.name, 'bit-identical']);
      // Another engine's last bits (version 1: the JavaScript engine's Math.exp, tanh, …): not bit for bit, from the start.
      else expect([b.name, r.match === 'bit-identical', r.firstDifferingStep]).toEqual([b.name, false, b.parent && b.parent.step > 0 ? 1 : 0]);
    }
  });

  it('stepwell verify on a notebook holding the current version’s fixtures: exit 0', async () => {
    const current = fixtures.filter((f) => f.v === LEDGER_VERSION);
    expect(current.length).toBeGreaterThanOrEqual(1);
    const dir = tempDir('versions');
    const nb = {
      nbformat: 4,
      nbformat_minor: 5,
      metadata: {},
      cells: current.map((f, i) => ({ cell_type: 'code', id: `c${i}`, source: String(raw(f.path).spec), metadata: { stepwell: raw(f.path) }, outputs: [] }))
    };
    const path = join(dir, 'fixtures.ipynb');
    writeFileSync(path, JSON.stringify(nb));
    let out = '';
    const code = await main(['verify', path], { write: (s: string) => (out += s) }, { write: () => true });
    expect(out.trim().split('\n').pop()).toMatch(/^verified: \d+ branches in \d+ cells bit-identical$/);
    expect(code).toBe(0);
  });
});
