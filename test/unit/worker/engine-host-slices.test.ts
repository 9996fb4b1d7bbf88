/**
 * The host's long rewinds and verifies run in slices over the core grove: progress between
 * slices, stop honoured without changing the session, and resume from a ledger-like thinned
 * trajectory. Expected values compare the host with the core stepped directly.
 */
import { EngineHost } from '../../../src/worker/engine-host';
import { realCore } from '../../../src/worker/core-adapter';
import type { EngineReply } from '../../../src/worker/protocol';
import { TEMPLATE_SPEC, parseSpec } from '../../../src/experiment';
import { Session } from '../../../src/core/session';
import { ledgerOf } from './ledger-of';

function directPrint(n: number): string {
  const parsed = parseSpec(TEMPLATE_SPEC);
  if (!parsed.ok) throw new Error('spec must parse');
  const s = Session.create(parsed.experiment);
  s.step(n);
  return s.fingerprint();
}

function collect(options: EngineHost.Options = {}) {
  const replies: EngineReply[] = [];
  const host = new EngineHost(realCore, r => replies.push(structuredClone(r)), options);
  return { host, replies, last: () => replies[replies.length - 1] };
}

const load = (id: number, checkpointEvery: number) => ({ id, kind: 'load', specText: TEMPLATE_SPEC, checkpointEvery });
const pause = (ms: number) => new Promise(resolve => setTimeout(resolve, ms));

/** A host with one update per slice (chunkMs 0), resumed at step `n` with only checkpoint 0 before the head. */
async function slowHostAt(n: number) {
  const a = collect();
  await a.host.receive(load(1, 0));
  await a.host.receive({ id: 2, kind: 'step', n });
  await a.host.receive({ id: 3, kind: 'snapshot' });
  const snap = a.last();
  if (snap.kind !== 'snapshot') throw new Error('expected a snapshot');
  const b = collect({ chunkMs: 0 });
  await b.host.receive({ ...load(1, 0), resume: ledgerOf(snap) });
  expect(b.last()).toMatchObject({ kind: 'ready', summary: { step: n, checkpointSteps: [0, n] } });
  return b;
}

describe('EngineHost long work in slices', () => {
  it('a stopped rewind fails and leaves the session as it was; an unstopped one posts progress on the way', async () => {
    const { host, replies, last } = await slowHostAt(6000);
    const rewinding = host.receive({ id: 3, kind: 'rewind', step: 5999 });
    await pause(5);
    await host.receive({ id: 4, kind: 'stop', target: 3 });
    await rewinding;
    expect(last()).toMatchObject({ id: 3, kind: 'failed', message: 'rewind to step 5999 was stopped; the session is unchanged' });
    await host.receive({ id: 5, kind: 'snapshot' });
    expect(last()).toMatchObject({ kind: 'snapshot', summary: { step: 6000, fingerprint: directPrint(6000) } });
    const mark = replies.length;
    await host.receive({ id: 6, kind: 'rewind', step: 40 });
    // one update per slice: a progress reply after each of the first 39
    const progress = replies.slice(mark).filter(r => r.kind === 'progress');
    expect(progress.map(p => (p.kind === 'progress' ? `${p.done}/${p.total}` : ''))).toEqual(Array.from({ length: 39 }, (_, i) => `${i + 1}/40`));
    // The steps after 40 are kept (the tip stays at 6000) until discarded.
    expect(last()).toMatchObject({ kind: 'rewound', summary: { step: 40, tip: 6000, fingerprint: directPrint(40), checkpointSteps: [0, 6000] } });
  });

  it('a stopped verify fails without a verdict; the session is unchanged', async () => {
    const { host, last } = await slowHostAt(6000);
    const verifying = host.receive({ id: 3, kind: 'verify' });
    await pause(5);
    await host.receive({ id: 4, kind: 'stop', target: 3 });
    await verifying;
    expect(last()).toMatchObject({ id: 3, kind: 'failed', message: "verify was stopped during a partial replay of branch 'main'; nothing was compared" });
    await host.receive({ id: 5, kind: 'snapshot' });
    expect(last()).toMatchObject({ kind: 'snapshot', summary: { step: 6000, fingerprint: directPrint(6000) } });
  });

  it('resumes from a thinned trajectory and a few checkpoints, verifies, and rewinds to a step whose record was dropped', async () => {
    const a = collect();
    await a.host.receive(load(1, 5));
    await a.host.receive({ id: 2, kind: 'step', n: 30 });
    await a.host.receive({ id: 3, kind: 'snapshot' });
    const snap = a.last();
    if (snap.kind !== 'snapshot') throw new Error('expected a snapshot');
    const b = collect();
    const trajectory = snap.trajectory.filter(r => r.step % 4 === 0 || r.step === 30);
    const checkpoints = snap.checkpoints.filter(c => c.step === 0 || c.step === 15 || c.step === 30);
    await b.host.receive({ ...load(1, 5), resume: ledgerOf(snap, { trajectory, checkpoints: checkpoints.map(c => c.step) }) });
    expect(b.last()).toMatchObject({ kind: 'ready', summary: { step: 30, checkpointSteps: [0, 15, 30] } });
    await b.host.receive({ id: 2, kind: 'verify' });
    expect(b.last()).toMatchObject({ kind: 'verified', result: { match: 'bit-identical', steps: 30, expected: directPrint(30), actual: directPrint(30) } });
    await b.host.receive({ id: 3, kind: 'rewind', step: 15 });
    const r = b.last();
    expect(r).toMatchObject({ kind: 'rewound', summary: { step: 15, fingerprint: directPrint(15) } });
    if (r.kind !== 'rewound') return;
    // record 15 was thinned away; the rewind re-stepped into it from checkpoint 0 and put it back in its place
    const full = snap.trajectory.find(x => x.step === 15);
    expect(r.trajectory.find(x => x.step === 15)).toMatchObject({ step: 15, loss: full?.loss, gradNorm: full?.gradNorm });
    expect(r.trajectory[r.trajectory.length - 1].step).toBe(30);
  });

  it('refuses a resume whose trajectory does not end at the saved state', async () => {
    const a = collect();
    await a.host.receive(load(1, 5));
    await a.host.receive({ id: 2, kind: 'step', n: 6 });
    await a.host.receive({ id: 3, kind: 'snapshot' });
    const snap = a.last();
    if (snap.kind !== 'snapshot') throw new Error('expected a snapshot');
    await a.host.receive({ ...load(4, 5), resume: ledgerOf(snap, { trajectory: snap.trajectory.slice(0, 4) }) });
    expect(a.last()).toMatchObject({ id: 4, kind: 'failed', message: "branches[0].trajectory (branch 'main'): ends at step 3, before the head (step 6): the steps in between have no records" });
  });
});

describe('findings while a long run goes on', () => {
  const progress = (rs: EngineReply[]) => rs.filter((r): r is Extract<EngineReply, { kind: 'progress' }> => r.kind === 'progress');

  it('carries re-evaluated findings in progress replies no more often than asked, and always in the final reply', async () => {
    // chunkMs 0: one update per slice, so there is a progress reply after every update.
    const every = collect({ chunkMs: 0, findingsEveryMs: 0 });
    await every.host.receive(load(1, 0));
    await every.host.receive({ id: 2, kind: 'step', n: 30 });
    const all = progress(every.replies);
    expect(all.length).toBeGreaterThanOrEqual(20);
    // With no time floor the first slice's reply carries them; later ones wait ten times the last evaluation's cost.
    const carrying = all.filter(p => p.readouts !== undefined);
    expect(all[0].readouts?.activations.now?.step).toBe(all[0].done);
    expect(carrying.every(p => p.readouts?.activations.now?.step === p.done)).toBe(true);
    const final = every.last();
    expect(final.kind === 'stepped' && final.readouts.activations.now?.step).toBe(30);

    const rarely = collect({ chunkMs: 0, findingsEveryMs: 1e9 });
    await rarely.host.receive(load(1, 0));
    await rarely.host.receive({ id: 2, kind: 'step', n: 30 });
    expect(progress(rarely.replies).length).toBeGreaterThanOrEqual(20);
    expect(progress(rarely.replies).filter(p => p.readouts !== undefined)).toHaveLength(0);
    const end = rarely.last();
    expect(end.kind === 'stepped' && end.readouts.activations.now?.step).toBe(30);
    // The same findings either way: the cadence changes when they are sent, not what they say.
    expect(end.kind === 'stepped' && final.kind === 'stepped' && end.readouts.findings).toEqual(final.kind === 'stepped' ? final.readouts.findings : null);
  });
});
