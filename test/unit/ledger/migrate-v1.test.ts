/**
 * Ledger version 1 → 2 on ledgers written by the version-1 code itself (fixtures in `v1/`, see
 * its README): the migration, validation, decoding, and every branch resumed in the engine host
 * bit for bit at the fingerprints the version-1 code printed, stepping on and saved as version 2.
 * A replay from the seed now differs at step 0: Stepwell 0.1 computed exp, log, cos, … with the
 * JavaScript engine's Math, core now with its own functions (DEVELOPERS.md, "Replays and
 * JavaScript engines"), so the initial weights differ in the last bits; the verdict says so.
 */
import * as fs from 'fs';
import * as path from 'path';
import { decodeBranches, LEDGER_VERSION, migrateLedger, migrateV1, validateLedger } from '../../../src/ledger';
import { EngineHost } from '../../../src/worker/engine-host';
import { realCore } from '../../../src/worker/core-adapter';
import type { EngineReply } from '../../../src/worker/protocol';
import { TEMPLATE_SPEC } from '../../../src/experiment';

const fixture = (name: string): Record<string, unknown> => JSON.parse(fs.readFileSync(path.join(__dirname, 'v1', name), 'utf8'));

// Fingerprints printed by the version-1 code when it wrote the fixtures (v1/README.md).
const MAIN_AT_12 = 'ea0f7796743e615fe805db70d296cdee198aae0ac5b18dc3f02d497bb910e81a';
const SLOWER_AT_14 = '16f210141e61c37ee854effdb8fac398b99d796ecb4bbc8bb607a97cefb95ff9';

async function resume(ledger: unknown): Promise<{ replies: EngineReply[]; host: EngineHost }> {
  const replies: EngineReply[] = [];
  const host = new EngineHost(realCore, r => replies.push(structuredClone(r)));
  await host.receive({ id: 1, kind: 'load', specText: TEMPLATE_SPEC, checkpointEvery: 4, resume: ledger });
  return { replies, host };
}

describe('ledger version 1', () => {
  it('migrates without touching its input: recipePatch becomes patch, nothing else changes', () => {
    const v1 = fixture('template-two-branches.json');
    const copy = JSON.parse(JSON.stringify(v1));
    const v2 = migrateV1(v1);
    expect(v1).toEqual(copy);
    expect(v2.version).toBe(2);
    const branches = v2.branches as Record<string, unknown>[];
    expect(branches).toHaveLength(2);
    expect(branches[1].patch).toEqual({ lr: 0.05 });
    expect('recipePatch' in branches[1]).toBe(false);
    expect({ ...branches[1], patch: undefined, recipePatch: (copy.branches as Record<string, unknown>[])[1].recipePatch }).toEqual({ ...(copy.branches as Record<string, unknown>[])[1], patch: undefined });
    expect(migrateLedger(v1)).toMatchObject({ ok: true, fromVersion: 1 });
  });

  it('a one-branch cell saved by version 1 opens at its state, steps on, and saves as the current version', async () => {
    const v1 = fixture('template-main.json');
    const checked = validateLedger(v1);
    expect(checked.ok ? [] : checked.errors).toEqual([]);
    if (!checked.ok) return;
    const [main] = decodeBranches(checked.ledger);
    expect([main.head.step, main.head.fingerprint, main.cursor]).toEqual([12, MAIN_AT_12, 12]);
    const { replies, host } = await resume(v1);
    expect(replies[0]).toMatchObject({ kind: 'ready', summary: { branch: 'main', step: 12, fingerprint: MAIN_AT_12 } });
    await host.receive({ id: 2, kind: 'verify' });
    // The stored state is the one version 1 wrote; a replay with today's arithmetic differs from the start.
    expect(replies[1]).toMatchObject({ kind: 'verified', result: { match: 'differs', firstDifferingStep: 0, steps: 12, expected: MAIN_AT_12 } });
    await host.receive({ id: 3, kind: 'step', n: 3 });
    await host.receive({ id: 4, kind: 'ledger', specText: TEMPLATE_SPEC, checkpointCap: 5 });
    const saved = replies[3];
    expect(saved.kind === 'ledger' && (saved.value as { version: number }).version).toBe(LEDGER_VERSION);
    expect(saved.kind === 'ledger' && saved.summary.step).toBe(15);
  });

  it('a two-branch ledger of version 1 opens with both branches at the fingerprints version 1 printed', async () => {
    const v1 = fixture('template-two-branches.json');
    const { replies, host } = await resume(v1);
    const ready = replies[0];
    expect(ready.kind).toBe('ready');
    if (ready.kind !== 'ready') return;
    expect(ready.summary.branch).toBe('slower');
    expect(ready.summary.branches.map(b => [b.name, b.parent, b.forkStep, b.patchText, b.step, b.fingerprint])).toEqual([
      ['main', null, null, '', 12, MAIN_AT_12],
      ['slower', 'main', 8, 'lr=0.05', 14, SLOWER_AT_14]
    ]);
    await host.receive({ id: 2, kind: 'verify', branches: ['main', 'slower'] });
    const v = replies[1];
    expect(v.kind === 'verified' && v.results.map(r => [r.branch, r.match, r.firstDifferingStep, r.expected])).toEqual([['main', 'differs', 0, MAIN_AT_12], ['slower', 'differs', 1, SLOWER_AT_14]]);
    // (the fork's replay notes the records it recomputes from its lineage's first update on: step 1)
    // Saved as version 2 and read again: both branches, their patch and fingerprints unchanged.
    await host.receive({ id: 3, kind: 'ledger', specText: TEMPLATE_SPEC, checkpointCap: 5 });
    const saved = replies[2];
    if (saved.kind !== 'ledger') throw new Error(`expected a ledger, got ${saved.kind}`);
    const again = await resume(JSON.parse(JSON.stringify(saved.value)));
    const r = again.replies[0];
    expect(r.kind === 'ready' && r.summary.branches.map(b => [b.name, b.patchText, b.fingerprint])).toEqual([['main', '', MAIN_AT_12], ['slower', 'lr=0.05', SLOWER_AT_14]]);
  });
});
