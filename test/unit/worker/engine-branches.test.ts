/**
 * The engine host's branch requests: fork (with patch problems), switch, rename, delete,
 * discard, compare, verify of several branches, and — the point of the ledger — every branch
 * (a forked one, one that restarts at step 0, one shown before its tip) continuing and replaying
 * bit for bit after a ledger round trip through JSON. Expected values come from the core
 * stepped directly or from the host itself before the round trip.
 */
import { EngineHost } from '../../../src/worker/engine-host';
import { realCore } from '../../../src/worker/core-adapter';
import type { EngineReply } from '../../../src/worker/protocol';
import { checkRequest } from '../../../src/worker/protocol';
import { TEMPLATE_SPEC, parseSpec } from '../../../src/experiment';
import { patchChainExperiment } from '../../../src/experiment/patch';
import { Grove } from '../../../src/core/session';
import { decodeFindings } from '../../../src/ledger';

function collect() {
  const replies: EngineReply[] = [];
  const host = new EngineHost(realCore, r => replies.push(structuredClone(r)));
  const last = () => replies[replies.length - 1];
  const send = async (body: Record<string, unknown>): Promise<EngineReply> => {
    await host.receive({ id: replies.length + 1, ...body });
    return last();
  };
  return { host, replies, last, send };
}

const load = { kind: 'load', specText: TEMPLATE_SPEC, checkpointEvery: 5 };

/** Three branches: main (30 steps, shown at 12), a fork at step 10 with a smaller lr, and a restart with another init. */
async function threeBranches() {
  const h = collect();
  await h.send(load);
  await h.send({ kind: 'step', n: 30 });
  expect(await h.send({ kind: 'fork', step: 10, patch: { lr: 0.02 }, name: 'slow' })).toMatchObject({ kind: 'branched', summary: { branch: 'slow', step: 10 } });
  await h.send({ kind: 'step', n: 15, sharpnessEvery: 5 });
  await h.send({ kind: 'curvature', k: 3, denseLimit: 500 });
  expect(await h.send({ kind: 'fork', step: 0, patch: { 'model.init': 'he-normal' }, from: 'main' })).toMatchObject({ kind: 'branched', summary: { branch: 'model.init=he-normal' } });
  await h.send({ kind: 'step', n: 7 });
  await h.send({ kind: 'gradcheck', sample: 20 });
  await h.send({ kind: 'switch', branch: 'main' });
  await h.send({ kind: 'rewind', step: 12 });
  return h;
}

describe('branch requests', () => {
  it('reports the branch list with origin, patch, cursor, tip and loss in every summary', async () => {
    const h = await threeBranches();
    const r = h.last();
    if (r.kind !== 'rewound') throw new Error(`expected rewound, got ${r.kind}`);
    expect(r.summary.branch).toBe('main');
    expect(r.summary.branches.map(b => [b.name, b.parent, b.forkStep, b.patchText, b.restart, b.step, b.tip])).toEqual([
      ['main', null, null, '', false, 12, 30],
      ['slow', 'main', 10, 'lr=0.02', false, 25, 25],
      ['model.init=he-normal', 'main', 0, 'model.init=he-normal', true, 7, 7]
    ]);
    const main = r.summary.branches[0];
    expect(main.loss).toBe(r.trajectory.find(x => x.step === 12)?.loss);
  });

  it('a patch that does not validate comes back as patch problems, and the grove is unchanged', async () => {
    const h = collect();
    await h.send(load);
    await h.send({ kind: 'step', n: 4 });
    const r = await h.send({ kind: 'fork', step: 2, patch: { lr: -1 } });
    expect(r).toMatchObject({ kind: 'patch-errors', errors: [{ path: 'recipe.lr', message: expect.stringMatching(/^patch 'lr': recipe\.lr/) }] });
    expect(await h.send({ kind: 'fork', step: 2, patch: { seed: 3 } })).toMatchObject({ kind: 'patch-errors', errors: [{ message: 'the patch seed=3 changes the setup or the seed, so the branch must start at step 0, not step 2' }] });
    expect(await h.send({ kind: 'snapshot' })).toMatchObject({ summary: { branch: 'main', branches: [{ name: 'main' }] } });
  });

  it('renames, deletes with descendants, and refuses the root', async () => {
    const h = await threeBranches();
    expect(await h.send({ kind: 'rename', branch: 'slow', to: 'lr-0.02' })).toMatchObject({ kind: 'branched', summary: { branches: [{ name: 'main' }, { name: 'lr-0.02' }, { name: 'model.init=he-normal' }] } });
    expect(await h.send({ kind: 'delete', branch: 'main' })).toMatchObject({ kind: 'failed', message: expect.stringContaining("'main' is the root branch") });
    await h.send({ kind: 'switch', branch: 'lr-0.02' });
    expect(await h.send({ kind: 'delete', branch: 'lr-0.02' })).toMatchObject({ kind: 'branched', removed: ['lr-0.02'], summary: { branch: 'main' } });
  });

  it('compares branches with examples drawn along each lineage', async () => {
    const h = collect();
    await h.send({ ...load, specText: TEMPLATE_SPEC.replace(/batch: \w+/, 'batch: 4') });
    await h.send({ kind: 'step', n: 10 });
    await h.send({ kind: 'fork', step: 6, patch: { batch: 8 }, name: 'wide' });
    await h.send({ kind: 'step', n: 4 });
    const r = await h.send({ kind: 'compare', branches: ['main', 'wide'] });
    if (r.kind !== 'comparison') throw new Error(`expected a comparison, got ${r.kind}: ${JSON.stringify(r)}`);
    expect(r.traces).toHaveLength(2);
    const [main, wide] = r.traces;
    // closed form: 4 rows per update on main; on wide 4 rows up to step 6, then 8
    expect(main.examples?.[main.steps.indexOf(10)]).toBe(40);
    expect(wide.examples?.[wide.steps.indexOf(10)]).toBe(4 * 6 + 8 * 4);
    expect(wide.recipeYaml).toContain('batch: 8');
    expect(r.comparison.steps[0].step).toBe(6);
    expect(r.comparison.steps[r.comparison.steps.length - 1].cells.map(c => c.examples)).toEqual([40, 56]);
  });

  it('checks the envelopes of the new requests', () => {
    expect(checkRequest({ id: 1, kind: 'fork', step: 1, patch: [] })).toBe('request.patch must be a mapping of spec keys to values');
    expect(checkRequest({ id: 1, kind: 'compare', branches: [] })).toBe('request.branches must be a non-empty list of branch names');
    expect(checkRequest({ id: 1, kind: 'rename', branch: 'a' })).toBe('request.to must be a string');
    expect(checkRequest({ id: 1, kind: 'switch', branch: 'a' })).toBeNull();
  });
});

describe('every branch after a ledger round trip', () => {
  it('continues and replays bit for bit: forked, restarted, and shown before its tip', async () => {
    const a = await threeBranches();
    const shown = await a.send({ kind: 'switch', branch: 'main' });
    if (shown.kind !== 'branched') throw new Error('expected branched');
    const built = await a.send({ kind: 'ledger', specText: TEMPLATE_SPEC, checkpointCap: 6 });
    if (built.kind !== 'ledger') throw new Error('expected a ledger');
    const stored = JSON.parse(JSON.stringify(built.value)) as { version: number; branches: { name: string; cursor?: number; patch?: object; restart?: boolean; readouts?: object }[] };
    expect(stored.version).toBe(3);
    expect(stored.branches.map(b => [b.name, b.cursor, b.patch, b.restart])).toEqual([
      ['main', 12, undefined, undefined],
      ['slow', undefined, { lr: 0.02 }, undefined],
      ['model.init=he-normal', undefined, { 'model.init': 'he-normal' }, true]
    ]);
    const before = built.summary.branches;
    const names = ['main', 'slow', 'model.init=he-normal'];
    const compared = await a.send({ kind: 'compare', branches: names });

    // The shown branch comes back with everything it showed: measurements, diagnosis, findings, derived readouts.
    const b = collect();
    const ready = await b.send({ ...load, resume: stored });
    expect(ready.kind === 'ready' && ready.readouts).toEqual(shown.readouts);
    expect(ready).toMatchObject({ kind: 'ready', summary: { branch: 'main', step: 12, tip: 30 } });
    if (ready.kind !== 'ready') return;
    expect(ready.summary.branches).toEqual(before);
    const verified = await b.send({ kind: 'verify', branches: ['main', 'slow', 'model.init=he-normal'] });
    expect(verified).toMatchObject({ kind: 'verified' });
    if (verified.kind !== 'verified') return;
    expect(verified.results.map(v => [v.branch, v.match, v.steps])).toEqual([['main', 'bit-identical', 30], ['slow', 'bit-identical', 25], ['model.init=he-normal', 'bit-identical', 7]]);
    // The same comparison (traces from step 0, the fork's shared steps included) as before saving.
    const again = await b.send({ kind: 'compare', branches: names });
    expect(again).toEqual({ ...compared, id: again.id });
    expect(again.kind === 'comparison' && again.traces[1].steps.slice(0, 3)).toEqual([0, 1, 2]);

    // The readouts come back with each branch.
    const slow = await b.send({ kind: 'switch', branch: 'slow' });
    if (slow.kind !== 'branched') throw new Error('expected branched');
    expect(slow.readouts.curvature?.step).toBe(25);
    expect(slow.readouts.sharpness.map(p => p.step)).toEqual([10, 15, 20, 25]);
    const restarted = await b.send({ kind: 'switch', branch: 'model.init=he-normal' });
    expect(restarted.kind === 'branched' && restarted.readouts.audit?.step).toBe(7);

    // Stepping on from the restored states gives what the core gives stepped directly.
    await b.send({ kind: 'switch', branch: 'slow' });
    const stepped = await b.send({ kind: 'step', n: 5 });
    const parsed = parseSpec(TEMPLATE_SPEC);
    const patched = patchChainExperiment(TEMPLATE_SPEC, [{ lr: 0.02 }]);
    if (!parsed.ok || !patched.ok) throw new Error('specs must parse');
    const g = Grove.create(parsed.experiment, { checkpointEvery: 5 });
    g.step('main', 10);
    g.fork('main', 10, 'slow', patched.experiment, { lr: 0.02 });
    g.step('slow', 20);
    expect(stepped.kind === 'stepped' && stepped.summary.fingerprint).toBe(g.session('slow').fingerprint());
    const rebuilt = await b.send({ kind: 'ledger', specText: TEMPLATE_SPEC, checkpointCap: 6 });
    // The ledger keeps each branch's findings tagged with it; the stepped branch's are those it now shows.
    if (rebuilt.kind !== 'ledger' || stepped.kind !== 'stepped') throw new Error('expected a ledger');
    const kept = decodeFindings((rebuilt.value as { findings: Record<string, unknown>[] }).findings);
    expect(kept.filter(f => f.branch === 'slow').map(({ branch: _b, ...f }) => f)).toEqual(stepped.readouts.findings);
    expect(kept.every(f => names.includes(f.branch as string))).toBe(true);
  });
});
