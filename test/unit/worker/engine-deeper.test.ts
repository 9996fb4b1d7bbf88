/**
 * The host's `deeper` request: each readout run in slices with progress, equal to the same core
 * task run whole on the same state (the readouts' numbers have their outside checks in
 * test/unit/probe; here a fault in slicing, the path, Stop or keeping shows up as a mismatch),
 * Stop discarding the partial result, and the kept results surviving a ledger round trip.
 */
import { EngineHost } from '../../../src/worker/engine-host';
import { realCore } from '../../../src/worker/core-adapter';
import type { EngineReply } from '../../../src/worker/protocol';
import { TEMPLATE_SPEC, parseSpec } from '../../../src/experiment';
import { Session } from '../../../src/core/session';
import { deeperTask, type DeeperRequest } from '../../../src/core/probe/readouts-at';
import { runUnits, type UnitTask } from '../../../src/core/probe/unit-task';
import { viewLedger } from '../../../src/worker/ledger-view';
import { deeperRequestProblem, planePath, thinDeeper, BATCH_RUN_POINTS } from '../../../src/worker/deeper';

function collect(options: EngineHost.Options = {}) {
  const replies: EngineReply[] = [];
  const host = new EngineHost(realCore, r => replies.push(structuredClone(r)), options);
  return { host, replies, last: () => replies[replies.length - 1] };
}

const load = (id: number, checkpointEvery = 5) => ({ id, kind: 'load', specText: TEMPLATE_SPEC, checkpointEvery });

/** The same readout from core directly, after `n` steps of the template (checkpoints every 5 for the plane's path). */
function direct(n: number, request: DeeperRequest) {
  const parsed = parseSpec(TEMPLATE_SPEC);
  if (!parsed.ok) throw new Error('template must parse');
  const s = Session.create(parsed.experiment);
  const checkpoints = [{ step: 0, fingerprint: '', state: s.state() }];
  for (let k = 1; k <= n; k++) {
    s.step(1);
    if (k % 5 === 0) checkpoints.push({ step: k, fingerprint: '', state: s.state() });
  }
  const path = request.what === 'plane' ? planePath(checkpoints, n, s.parameters) : undefined;
  const result = runUnits(deeperTask(s, request, path) as UnitTask<ReturnType<typeof deeperTask> extends { result(): infer R } ? R : never>);
  return result === null ? null : thinDeeper(result);
}

async function hostAt(n: number, options: EngineHost.Options = {}) {
  const c = collect(options);
  await c.host.receive(load(1));
  await c.host.receive({ id: 2, kind: 'step', n });
  return c;
}

describe('EngineHost deeper readouts', () => {
  const cases: DeeperRequest[] = [
    { what: 'line', points: 21 },
    { what: 'plane', directions: 'random', points: 9 },
    { what: 'plane', directions: 'eigenvectors', points: 7 },
    { what: 'range', from: 1e-4, to: 10, steps: 25 },
    { what: 'precision' },
    { what: 'batch', sizes: [2, 8], examples: 64 }
  ];
  it.each(cases)('%j equals the core task run whole on the same state, and is kept on the branch', async (request) => {
    const { host, last } = await hostAt(12, { chunkMs: 0 });
    await host.receive({ id: 3, kind: 'deeper', request });
    const r = last();
    expect(r.kind).toBe('deeper');
    if (r.kind !== 'deeper') return;
    expect(r.stopped).toBe(false);
    expect(r.result).not.toBeNull();
    expect(r.result).toEqual(structuredClone(direct(12, request)));
    expect(r.result?.step).toBe(12);
    expect(r.readouts.deeper[request.what]).toEqual(r.result);
    // the plane projects the branch's checkpoints before the cursor, then the cursor itself
    if (r.result?.what === 'plane') expect(r.result.result.path.steps).toEqual([0, 5, 10, 12]);
  });

  it('the plane and the range test post progress of their units; a line is one unit', async () => {
    const { host, replies } = await hostAt(3, { chunkMs: 0 });
    const mark = replies.length;
    await host.receive({ id: 3, kind: 'deeper', request: { what: 'plane', directions: 'random', points: 7 } });
    const progress = replies.slice(mark).filter(r => r.kind === 'progress');
    expect(progress).toHaveLength(6);
    expect(progress.map(p => (p.kind === 'progress' ? `${p.done}/${p.total}` : ''))).toEqual(['1/7', '2/7', '3/7', '4/7', '5/7', '6/7']);
    const m2 = replies.length;
    await host.receive({ id: 4, kind: 'deeper', request: { what: 'range', steps: 10 } });
    expect(replies.slice(m2).filter(r => r.kind === 'progress').length).toBeGreaterThan(0);
    const m3 = replies.length;
    await host.receive({ id: 5, kind: 'deeper', request: { what: 'line' } });
    expect(replies.slice(m3).filter(r => r.kind === 'progress')).toHaveLength(0);
  });

  it.each([
    ['plane', { what: 'plane', directions: 'eigenvectors', points: 41 }],
    ['range', { what: 'range', steps: 400, from: 1e-6, to: 1e-3 }]
  ] as [string, DeeperRequest][])('a stop midway discards the partial %s: nothing of it is kept, the session is unchanged', async (_name, request) => {
    const { host, replies, last } = await hostAt(10, { chunkMs: 0 });
    await host.receive({ id: 3, kind: 'deeper', request: { what: 'line', points: 5 } });
    const kept = last();
    if (kept.kind !== 'deeper' || kept.result === null) throw new Error('expected a line');
    await host.receive({ id: 4, kind: 'snapshot' });
    const before = last();
    let stopSent = false;
    const running = host.receive({ id: 5, kind: 'deeper', request });
    // stop once the first progress reply is out (one unit per slice)
    for (let i = 0; i < 1000 && !stopSent; i++) {
      await new Promise(resolve => setTimeout(resolve, 1));
      if (replies.some(r => r.id === 5 && r.kind === 'progress')) {
        await host.receive({ id: 6, kind: 'stop', target: 5 });
        stopSent = true;
      }
    }
    await running;
    expect(stopSent).toBe(true);
    const r = last();
    expect(r).toMatchObject({ id: 5, kind: 'deeper', stopped: true, result: null });
    if (r.kind !== 'deeper') return;
    expect(Object.keys(r.readouts.deeper)).toEqual(['line']);
    expect(r.readouts.deeper.line).toEqual(kept.result);
    await host.receive({ id: 7, kind: 'snapshot' });
    const after = last();
    expect(after.kind === 'snapshot' && before.kind === 'snapshot' && after.summary.fingerprint === before.summary.fingerprint).toBe(true);
  });

  it('kept readouts survive the ledger: resumed by an engine and shown by the page reader without one', async () => {
    const { host, last } = await hostAt(8);
    await host.receive({ id: 3, kind: 'deeper', request: { what: 'line', points: 11 } });
    await host.receive({ id: 4, kind: 'deeper', request: { what: 'precision', bits: [10, 4] } });
    const taken = last();
    if (taken.kind !== 'deeper') throw new Error('expected a deeper reply');
    await host.receive({ id: 5, kind: 'ledger', specText: TEMPLATE_SPEC, checkpointCap: 20 });
    const saved = last();
    if (saved.kind !== 'ledger') throw new Error('expected a ledger');
    const stored = JSON.parse(JSON.stringify(saved.value));
    const b = collect();
    await b.host.receive({ ...load(1), resume: stored });
    const ready = b.last();
    expect(ready.kind).toBe('ready');
    if (ready.kind !== 'ready') return;
    expect(Object.keys(ready.readouts.deeper).sort()).toEqual(['line', 'precision']);
    expect(ready.readouts.deeper).toEqual(taken.readouts.deeper);
    const view = viewLedger(stored);
    expect(view.ok).toBe(true);
    if (view.ok) expect(view.view.readouts.deeper).toEqual(taken.readouts.deeper);
    // going back before the readouts' step drops them with the discarded steps
    await b.host.receive({ id: 2, kind: 'rewind', step: 4 });
    await b.host.receive({ id: 3, kind: 'discard' });
    const gone = b.last();
    expect(gone.kind === 'branched' && Object.keys(gone.readouts.deeper)).toEqual([]);
  });

  it('an edited deeper readout in a stored ledger fails its digest', async () => {
    const { host, last } = await hostAt(4);
    await host.receive({ id: 3, kind: 'deeper', request: { what: 'precision', bits: [8] } });
    await host.receive({ id: 4, kind: 'ledger', specText: TEMPLATE_SPEC, checkpointCap: 20 });
    const saved = last();
    if (saved.kind !== 'ledger') throw new Error('expected a ledger');
    const stored = JSON.parse(JSON.stringify(saved.value));
    stored.branches[0].readouts.deeper.precision.result.rows[0].loss = 12345;
    expect(viewLedger(stored).ok).toBe(false);
  });

  it.each([
    [{ what: 'plane', directions: 'diagonal' }, 'request.request.directions must be random or eigenvectors, got diagonal'],
    [{ what: 'plane', directions: 'random', points: 500 }, 'request.request.points must be a whole number from 3 to 61, got 500'],
    [{ what: 'range', from: 1, to: 0.1 }, 'request.request.from (1) must be below request.request.to (0.1)'],
    [{ what: 'precision', bits: [0] }, 'request.request.bits must be a non-empty list of whole numbers from 1 to 52 (significant bits)'],
    [{ what: 'batch', sizes: [4], examples: 10 }, 'request.request.sizes must list 2 to 6 positive whole batch sizes'],
    [{ what: 'tilt' }, 'request.request.what must be one of line, plane, range, precision, batch, got tilt']
  ])('refuses %j with an exact message', async (request, message) => {
    expect(deeperRequestProblem(request)).toBe(message);
    const { host, last } = collect();
    await host.receive({ id: 9, kind: 'deeper', request });
    expect(last()).toEqual({ id: 9, kind: 'failed', message: `bad request: ${message}` });
  });

  it('a kept batch comparison carries at most BATCH_RUN_POINTS points per run, first and last included', async () => {
    const { host, last } = await hostAt(0);
    await host.receive({ id: 3, kind: 'deeper', request: { what: 'batch', sizes: [1, 8], examples: 1200 } });
    const r = last();
    if (r.kind !== 'deeper' || r.result?.what !== 'batch') throw new Error('expected a batch comparison');
    expect(r.result.result.runs).toHaveLength(2);
    const [small] = r.result.result.runs;
    expect(small.examples.length).toBeLessThanOrEqual(BATCH_RUN_POINTS);
    expect(small.examples[0]).toBe(0);
    expect(small.examples[small.examples.length - 1]).toBeGreaterThanOrEqual(1200);
    expect(small.loss[small.loss.length - 1]).toBe(small.finalLoss);
  });
});
