/**
 * The engine host driven directly in Node (no Worker), over the real core and spec parser.
 * Expected values here are not numeric references: they compare the host's results with
 * the same core stepped directly, so a fault in chunking, checkpoints, rewind, resume or
 * verify shows up as a fingerprint mismatch.
 */
import { EngineHost } from '../../../src/worker/engine-host';
import { EngineClient } from '../../../src/worker/client';
import { inProcessPort } from '../../../src/worker/in-process';
import { realCore } from '../../../src/worker/core-adapter';
import type { EngineReply } from '../../../src/worker/protocol';
import { TEMPLATE_SPEC, parseSpec } from '../../../src/experiment';
import { Session } from '../../../src/core/session';
import { ledgerOf } from './ledger-of';
import { thinInPlace, MEMORY_RECORD_CAP, MEMORY_CHECKPOINT_CAP, REPLY_SAMPLE, DISPLAY_RECORDS } from '../../../src/worker/sampling';

function experiment() {
  const parsed = parseSpec(TEMPLATE_SPEC);
  if (!parsed.ok) throw new Error('template must parse');
  return parsed.experiment;
}

/** Fingerprint of a fresh session after n direct steps (the comparison baseline). */
function directPrint(n: number, spec = TEMPLATE_SPEC): string {
  const parsed = parseSpec(spec);
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

const load = (id: number, checkpointEvery = 5) => ({ id, kind: 'load', specText: TEMPLATE_SPEC, checkpointEvery });

describe('EngineHost', () => {
  it('loads the template and answers ready at step 0 with record 0', async () => {
    const { host, last } = collect();
    await host.receive(load(1));
    const r = last();
    expect(r.kind).toBe('ready');
    if (r.kind !== 'ready') return;
    expect(r.summary.step).toBe(0);
    expect(r.trajectory).toHaveLength(1);
    expect(r.summary.fingerprint).toMatch(/^[0-9a-f]{64}$/);
    expect(r.summary.fingerprint).toBe(directPrint(0));
    expect(r.summary.recipe).toContain('sgd');
    expect(r.summary.setup).toContain('network 3→5 tanh→1 linear');
  });

  it('reports spec errors with their line numbers instead of loading', async () => {
    const { host, last } = collect();
    const broken = TEMPLATE_SPEC.replace('lr: 0.1 ', 'lr: -3  ');
    await host.receive({ id: 1, kind: 'load', specText: broken, checkpointEvery: 5 });
    const r = last();
    expect(r.kind).toBe('spec-errors');
    if (r.kind !== 'spec-errors') return;
    const lrLine = broken.split('\n').findIndex(l => l.includes('lr: -3')) + 1;
    expect(r.errors.some(e => e.line === lrLine && e.path.includes('lr'))).toBe(true);
  });

  it('steps n updates and reaches the same state as the core stepped directly', async () => {
    const { host, last } = collect();
    await host.receive(load(1));
    await host.receive({ id: 2, kind: 'step', n: 10 });
    const r = last();
    expect(r.kind).toBe('stepped');
    if (r.kind !== 'stepped') return;
    expect(r.summary.step).toBe(10);
    expect(r.records.map(x => x.step)).toEqual([1, 2, 3, 4, 5, 6, 7, 8, 9, 10]);
    expect(r.summary.fingerprint).toBe(directPrint(10));
    expect(r.summary.checkpointSteps).toEqual([0, 5, 10]);
  });

  it('posts progress between chunks and stops early on a stop request', async () => {
    const { host, replies, last } = collect({ chunkMs: 0 });
    await host.receive(load(1));
    const running = host.receive({ id: 2, kind: 'step', n: 100000 });
    // Let the first chunk run, then stop: the loop must see the flag at the next yield.
    await new Promise(resolve => setTimeout(resolve, 5));
    await host.receive({ id: 3, kind: 'stop', target: 2 });
    await running;
    const progress = replies.filter(r => r.kind === 'progress');
    expect(progress.length).toBeGreaterThan(0);
    const r = last();
    expect(r.kind).toBe('stepped');
    if (r.kind !== 'stepped') return;
    expect(r.stopped).toBe(true);
    expect(r.reason).toBe('stopped');
    expect(r.summary.step).toBeLessThan(100000);
    // Replies carry an even sample of the records; the last one is always the current step.
    const delivered = progress.flatMap(p => (p.kind === 'progress' ? p.records : [])).concat(r.records);
    expect(delivered.length).toBeLessThanOrEqual(r.summary.step);
    expect(delivered[delivered.length - 1].step).toBe(r.summary.step);
    expect(delivered.every((x, i) => i === 0 || x.step > delivered[i - 1].step)).toBe(true);
    expect(r.summary.fingerprint).toBe(directPrint(r.summary.step));
  });

  it('rewinds to any earlier step by replaying from the nearest checkpoint', async () => {
    const { host, last } = collect();
    await host.receive(load(1, 5));
    await host.receive({ id: 2, kind: 'step', n: 12 });
    await host.receive({ id: 3, kind: 'rewind', step: 7 });
    const r = last();
    expect(r.kind).toBe('rewound');
    if (r.kind !== 'rewound') return;
    expect(r.summary.step).toBe(7);
    // Later steps are kept: the trajectory still runs to step 12.
    expect([r.summary.tip, r.trajectory.length]).toEqual([12, 13]);
    expect(r.summary.fingerprint).toBe(directPrint(7));
    expect(r.summary.checkpointSteps).toEqual([0, 5, 10]);
    await host.receive({ id: 4, kind: 'rewind', step: 9 });
    expect(last()).toMatchObject({ kind: 'rewound', summary: { step: 9, tip: 12, fingerprint: directPrint(9) } });
    await host.receive({ id: 5, kind: 'rewind', step: 13 });
    expect(last()).toMatchObject({ kind: 'failed', message: "cannot move branch 'main' to step 13: its furthest step is 12" });
    await host.receive({ id: 6, kind: 'discard' });
    expect(last()).toMatchObject({ kind: 'branched', dropped: 3, summary: { step: 9, tip: 9 } });
  });

  it('resumes from a snapshot and continues bit for bit', async () => {
    const a = collect();
    await a.host.receive(load(1));
    await a.host.receive({ id: 2, kind: 'step', n: 8 });
    await a.host.receive({ id: 3, kind: 'snapshot' });
    const snap = a.last();
    if (snap.kind !== 'snapshot') throw new Error('expected a snapshot');
    const b = collect();
    await b.host.receive({ ...load(1), resume: ledgerOf(snap) });
    expect(b.last()).toMatchObject({ kind: 'ready', summary: { step: 8 } });
    await b.host.receive({ id: 2, kind: 'step', n: 4 });
    const r = b.last();
    expect(r.kind === 'stepped' && r.summary.fingerprint).toBe(directPrint(12));
  });

  it('verify says bit-identical for an honest session and names the first differing step otherwise', async () => {
    const a = collect();
    await a.host.receive(load(1, 5));
    await a.host.receive({ id: 2, kind: 'step', n: 9 });
    await a.host.receive({ id: 3, kind: 'verify' });
    expect(a.last()).toMatchObject({ kind: 'verified', result: { branch: 'main', match: 'bit-identical', steps: 9 } });
    await a.host.receive({ id: 4, kind: 'snapshot' });
    const snap = a.last();
    if (snap.kind !== 'snapshot') throw new Error('expected a snapshot');
    const tampered = snap.trajectory.map(r => (r.step === 3 ? { ...r, loss: r.loss * (1 + 1e-15) + 1e-300 } : r));
    const b = collect();
    await b.host.receive({ ...load(1, 5), resume: ledgerOf(snap, { trajectory: tampered }) });
    await b.host.receive({ id: 2, kind: 'verify' });
    expect(b.last()).toMatchObject({ kind: 'verified', result: { match: 'differs', firstDifferingStep: 3 } });
  });

  it('stops stepping when the loss becomes non-finite, at the last finite state, and never saves a non-finite head', async () => {
    const { host, last } = collect();
    const wild = TEMPLATE_SPEC.replace('lr: 0.1 ', 'lr: 1e6 ');
    await host.receive({ id: 1, kind: 'load', specText: wild, checkpointEvery: 0 });
    expect(last().kind).toBe('ready');
    await host.receive({ id: 2, kind: 'step', n: 500 });
    const r = last();
    expect(r).toMatchObject({ kind: 'stepped', reason: 'non-finite', stopped: false });
    if (r.kind !== 'stepped') return;
    expect(r.summary.step).toBeLessThan(500);
    // The bad step is named, then dropped: the branch stays one step before it.
    expect(r.nonFinite).toBeDefined();
    expect(Number.isFinite(r.nonFinite?.loss)).toBe(false);
    expect(r.summary.step).toBe((r.nonFinite?.step ?? 0) - 1);
    expect(r.summary.tip).toBe(r.summary.step);
    expect(r.records.every(x => Number.isFinite(x.loss))).toBe(true);
    await host.receive({ id: 3, kind: 'ledger', specText: wild, checkpointCap: 5 });
    const saved = last();
    if (saved.kind !== 'ledger') throw new Error(`expected a ledger, got ${saved.kind}`);
    const head = (saved.value as { branches: { head: { step: number } }[] }).branches[0].head;
    expect(head.step).toBe(r.summary.step);
    expect(saved.trajectory.every(x => Number.isFinite(x.loss))).toBe(true);
  });

  it('refuses to build a ledger above maxBytes, and keeps the session', async () => {
    const { host, last } = collect();
    await host.receive({ id: 1, kind: 'load', specText: TEMPLATE_SPEC, checkpointEvery: 0 });
    await host.receive({ id: 2, kind: 'step', n: 3 });
    await host.receive({ id: 3, kind: 'ledger', specText: TEMPLATE_SPEC, checkpointCap: 5, maxBytes: 1000 });
    expect(last()).toMatchObject({ kind: 'failed', message: expect.stringMatching(/^the ledger would take [\d ]+ bytes, above the limit of 1 000 \(setting maxLedgerBytes\); nothing is lost/) });
    await host.receive({ id: 4, kind: 'ledger', specText: TEMPLATE_SPEC, checkpointCap: 5 });
    expect(last()).toMatchObject({ kind: 'ledger', summary: { step: 3 } });
  });

  it('enforces the limits it is given before allocating, naming the setting', async () => {
    const { host, last } = collect();
    const limits = { maxSpecChars: 4_000_000, maxParameters: 10, maxRows: 1_000_000, maxColumns: 10_000, maxActivations: 20_000_000, maxFileBytes: 64 };
    await host.receive({ id: 1, kind: 'load', specText: TEMPLATE_SPEC, checkpointEvery: 0, limits });
    const r = last();
    expect(r.kind).toBe('spec-errors');
    expect(r.kind === 'spec-errors' && r.errors.map(e => e.message).join(' ')).toMatch(/parameters.*10/);
    await host.receive({ id: 2, kind: 'load', specText: TEMPLATE_SPEC, checkpointEvery: 0, limits: { ...limits, maxParameters: -1 } });
    expect(last()).toMatchObject({ kind: 'failed', message: 'bad request: request.limits.maxParameters must be a positive integer, got -1' });
  });

  it('run-until ends when the condition holds', async () => {
    const { host, last } = collect();
    await host.receive(load(1));
    await host.receive({ id: 2, kind: 'run-until', condition: { kind: 'loss-below', value: 1e9 }, maxSteps: 50 });
    expect(last()).toMatchObject({ kind: 'stepped', reason: 'condition', summary: { step: 1 } });
  });

  it('audits the gradient at the current step', async () => {
    const { host, last } = collect();
    await host.receive(load(1));
    await host.receive({ id: 2, kind: 'step', n: 3 });
    await host.receive({ id: 3, kind: 'gradcheck', sample: 50 });
    const r = last();
    expect(r.kind).toBe('audit');
    if (r.kind !== 'audit') return;
    expect(r.step).toBe(3);
    expect(r.result.layers).toHaveLength(2);
    // source: Stanford CS231n notes (from memory) — a correct float64 gradient audits below 1e-7.
    expect(r.result.verdict).toBe('right');
  });

  it('answers malformed requests and requests before load with a clear failure', async () => {
    const { host, last } = collect();
    await host.receive({ id: 7, kind: 'step', n: -1 });
    expect(last()).toMatchObject({ id: 7, kind: 'failed', message: expect.stringContaining('request.n') });
    await host.receive({ id: 8, kind: 'launch' });
    expect(last()).toMatchObject({ id: 8, kind: 'failed', message: expect.stringContaining('request.kind') });
    await host.receive({ id: 9, kind: 'step', n: 1 });
    expect(last()).toMatchObject({ id: 9, kind: 'failed', message: expect.stringContaining('load') });
    await host.receive({ id: 10, kind: 'step', n: 5, sharpnessEvery: -2 });
    expect(last()).toMatchObject({ id: 10, kind: 'failed', message: expect.stringContaining('request.sharpnessEvery') });
    await host.receive({ id: 11, kind: 'curvature', k: 3 });
    expect(last()).toMatchObject({ id: 11, kind: 'failed', message: expect.stringContaining('request.denseLimit') });
    await host.receive({ id: 12, kind: 'ledger', specText: 7, checkpointCap: 4 });
    expect(last()).toMatchObject({ id: 12, kind: 'failed', message: expect.stringContaining('request.specText') });
    await host.receive('step');
    expect(last()).toMatchObject({ id: -1, kind: 'failed', message: expect.stringContaining('object') });
  });
});

describe('EngineClient over an in-process port', () => {
  it('matches replies to requests and delivers progress', async () => {
    const client = new EngineClient(inProcessPort(realCore, { chunkMs: 0 }));
    const ready = await client.request({ kind: 'load', specText: TEMPLATE_SPEC, checkpointEvery: 0 });
    expect(ready.kind).toBe('ready');
    let progressed = 0;
    const stepped = await client.request({ kind: 'step', n: 20 }, p => (progressed += p.records.length));
    expect(stepped.kind).toBe('stepped');
    if (stepped.kind !== 'stepped') return;
    // 20 steps with a progress message after each: every record fits in the samples.
    expect(progressed + stepped.records.length).toBe(20);
    expect(stepped.summary.fingerprint).toBe(directPrint(20));
    expect(client.inFlight).toEqual([]);
    client.dispose();
    expect((await client.request({ kind: 'snapshot' })).kind).toBe('failed');
  });

  it('uses a spec with explicit mini-batches deterministically', async () => {
    const spec = TEMPLATE_SPEC.replace('batch: full ', 'batch: 3    ');
    expect(parseSpec(spec).ok).toBe(true);
    const client = new EngineClient(inProcessPort(realCore));
    await client.request({ kind: 'load', specText: spec, checkpointEvery: 4 });
    await client.request({ kind: 'step', n: 10 });
    const v = await client.request({ kind: 'verify' });
    expect(v).toMatchObject({ kind: 'verified', result: { match: 'bit-identical' } });
    const r = await client.request({ kind: 'rewind', step: 6 });
    expect(r.kind === 'rewound' && r.summary.fingerprint).toBe(directPrint(6, spec));
    expect(experiment().seed).toBe(7);
  });
});

describe('thinInPlace', () => {
  const recs = (n: number) => Array.from({ length: n }, (_, i) => ({ step: i, loss: 1, batchLoss: 1, gradNorm: 1, updateNorm: 1, lr: 1, evaluations: 1, layers: [], ms: 0 }));
  it('leaves short lists alone and halves the old part of long ones, keeping the first and the recent records', () => {
    expect(thinInPlace(recs(10), 20, 5)).toHaveLength(10);
    const long = thinInPlace(recs(30), 20, 5);
    expect(long[0].step).toBe(0);
    expect(long.slice(-5).map(r => r.step)).toEqual([25, 26, 27, 28, 29]);
    expect(long.length).toBeLessThanOrEqual(20);
    const steps = long.map(r => r.step);
    expect([...steps].sort((a, b) => a - b)).toEqual(steps);
  });
});

describe('long runs stay bounded in memory', () => {
  it('thins the trajectory and the checkpoints the host keeps, and samples what it sends', async () => {
    const { host, replies, last } = collect({ chunkMs: 20 });
    await host.receive({ id: 1, kind: 'load', specText: TEMPLATE_SPEC, checkpointEvery: 5 });
    const n = MEMORY_RECORD_CAP + 5000;
    await host.receive({ id: 2, kind: 'step', n });
    const stepped = last();
    expect(stepped).toMatchObject({ kind: 'stepped', summary: { step: n } });
    for (const r of replies) if (r.kind === 'progress' || r.kind === 'stepped') expect(r.records.length).toBeLessThanOrEqual(REPLY_SAMPLE);
    await host.receive({ id: 3, kind: 'snapshot' });
    const snap = last();
    if (snap.kind !== 'snapshot') throw new Error('expected a snapshot');
    expect(snap.trajectory.length).toBeLessThanOrEqual(MEMORY_RECORD_CAP);
    expect(snap.trajectory[snap.trajectory.length - 1].step).toBe(n);
    expect(snap.checkpoints.length).toBeLessThanOrEqual(2 * MEMORY_CHECKPOINT_CAP);
    await host.receive({ id: 4, kind: 'ledger', specText: TEMPLATE_SPEC, checkpointCap: 20 });
    const ledger = last();
    if (ledger.kind !== 'ledger') throw new Error('expected a ledger');
    expect(ledger.trajectory.length).toBeLessThanOrEqual(DISPLAY_RECORDS);
    // The replay still matches: thinning drops records, never changes them.
    await host.receive({ id: 5, kind: 'verify' });
    expect(last()).toMatchObject({ kind: 'verified', result: { match: 'bit-identical', steps: n } });
  }, 60_000);
});
