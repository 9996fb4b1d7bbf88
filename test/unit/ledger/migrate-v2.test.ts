/**
 * Ledger version 2 → 3 on a ledger written by the version-2 code itself (fixture in `v2/`, see
 * its README): the migration, validation with the version-2 readouts and their digests kept,
 * every branch resumed in the engine host at the fingerprints the version-2 code printed and
 * replayed bit for bit, and saved again as version 3 with the findings of every branch.
 */
import * as fs from 'fs';
import * as path from 'path';
import { decodeBranches, decodeFindings, LEDGER_VERSION, migrateLedger, migrateV2, validateLedger } from '../../../src/ledger';
import { EngineHost } from '../../../src/worker/engine-host';
import { realCore } from '../../../src/worker/core-adapter';
import type { EngineReply } from '../../../src/worker/protocol';
import { TEMPLATE_SPEC } from '../../../src/experiment';

const fixture = (): Record<string, unknown> => JSON.parse(fs.readFileSync(path.join(__dirname, 'v2', 'template-two-branches.json'), 'utf8'));

// Head fingerprints printed by the version-2 code when it wrote the fixture (v2/README.md).
const MAIN_AT_12 = 'e94f75f98aff7979e2cca3cce60c62b2f8a59786e1977dca5187f1eb53468033';
const SLOWER_AT_14 = '0b72c3fbcb7299751a9b5f092b2d18dacfd336d9b5e6ba7e5675dfcd4ce1f296';

describe('ledger version 2', () => {
  it('migrates without touching its input: the version, and findings tagged with the active branch', () => {
    const v2 = fixture();
    expect(v2.version).toBe(2);
    const copy = JSON.parse(JSON.stringify(v2));
    const v3 = migrateV2(v2);
    expect(v2).toEqual(copy);
    expect({ ...v3, version: 2 }).toEqual(copy);
    expect(v3.version).toBe(3);
    // Version 2 carried findings as untagged plain objects (the product wrote none): they go to the active branch.
    const handMade = migrateV2({ ...copy, findings: [{ id: 'plateau', statement: '~odd', measured: 0.5 }] });
    expect(handMade.findings).toEqual([{ id: 'plateau', statement: '~~odd', measured: 0.5, branch: 'slower' }]);
    expect(decodeFindings(handMade.findings as Record<string, unknown>[])).toEqual([{ id: 'plateau', statement: '~odd', measured: 0.5, branch: 'slower' }]);
    expect(migrateLedger(v2)).toMatchObject({ ok: true, fromVersion: 2 });
    expect(LEDGER_VERSION).toBe(3);
  });

  it('validates as version 3 with its curvature, sharpness and audit readouts and their digests as written', () => {
    const checked = validateLedger(fixture());
    expect(checked.ok ? [] : checked.errors).toEqual([]);
    if (!checked.ok) return;
    const [main, slower] = decodeBranches(checked.ledger);
    expect(main.readouts.curvature?.step).toBe(12);
    expect(main.readouts.audit?.step).toBe(12);
    expect(main.readouts.sharpness.map((p) => p.step)).toEqual([0, 4, 8, 12]);
    expect([main.readouts.noise, main.readouts.activations, main.readouts.init, main.readouts.data]).toEqual([null, null, null, null]);
    expect(slower.readouts.curvature).toBeNull();
  });

  it('resumes both branches at the fingerprints version 2 printed, replays them bit for bit, and saves as version 3', async () => {
    const replies: EngineReply[] = [];
    const host = new EngineHost(realCore, (r) => replies.push(structuredClone(r)));
    await host.receive({ id: 1, kind: 'load', specText: TEMPLATE_SPEC, checkpointEvery: 4, resume: fixture() });
    const ready = replies[0];
    if (ready.kind !== 'ready') throw new Error(`expected ready, got ${JSON.stringify(ready).slice(0, 300)}`);
    expect(ready.summary.branches.map((b) => [b.name, b.step, b.fingerprint])).toEqual([['main', 12, MAIN_AT_12], ['slower', 14, SLOWER_AT_14]]);
    await host.receive({ id: 2, kind: 'verify', branches: ['main', 'slower'] });
    const v = replies[1];
    expect(v.kind === 'verified' && v.results.map((r) => [r.branch, r.match])).toEqual([['main', 'bit-identical'], ['slower', 'bit-identical']]);
    await host.receive({ id: 3, kind: 'step', n: 2 });
    await host.receive({ id: 4, kind: 'ledger', specText: TEMPLATE_SPEC, checkpointCap: 5 });
    const saved = replies[3];
    if (saved.kind !== 'ledger') throw new Error(`expected a ledger, got ${saved.kind}`);
    const again = validateLedger(JSON.parse(JSON.stringify(saved.value)));
    if (!again.ok) throw new Error(again.errors.join('; '));
    expect(again.ledger.version).toBe(3);
    // The stepped branch got its findings evaluated; each names its branch.
    expect(decodeFindings(again.ledger.findings).every((f) => f.branch === 'main' || f.branch === 'slower')).toBe(true);
    expect(decodeBranches(again.ledger).find((b) => b.name === 'slower')?.readouts.activations).not.toBeNull();
  });
});
