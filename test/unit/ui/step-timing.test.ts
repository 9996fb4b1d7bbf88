/**
 * The status line's ms/step after a stepping action is the mean of the branch's last step records
 * — what the same cell shows after a reload — not the request's own elapsed time: a single step
 * whose request was slowed (a garbage collection, a busy core) showed "13.3 ms/step" before a
 * reload and "1.0 ms/step" after it. The expected value is the arithmetic mean of the records
 * (common practice (no single source)).
 */
import { TEMPLATE_SPEC } from '../../../src/experiment';
import type { EngineReply } from '../../../src/worker/protocol';
import { controllerOf, fakeCell } from './fake-cell';

describe('the status line’s timing after a step', () => {
  it('is the mean of the last records, whatever the request itself took', async () => {
    const cell = fakeCell(TEMPLATE_SPEC);
    const c = controllerOf(cell, {}, {}, port => {
      const listen = port.listen.bind(port);
      // A slowed request: the reply says its one update took 13.3 ms of wall time.
      port.listen = l => listen((reply: EngineReply) => l(reply.kind === 'stepped' ? { ...reply, elapsedMs: 13.3 } : reply));
      return port;
    });
    expect(await c.run()).toBe(true);
    expect(await c.step(30)).toBe(true);
    expect(await c.step(1)).toBe(true);
    const records = c.state.trajectory.filter(r => r.step > 0);
    expect(records).toHaveLength(31);
    const total = records.reduce((a, r) => a + r.ms, 0);
    const shown = c.state.msPerStep ?? c.state.msBelow;
    expect(shown).toBeDefined();
    if (c.state.msPerStep !== undefined) expect(c.state.msPerStep).toBeCloseTo(total / records.length, 12);
    else expect(c.state.msBelow).toBeCloseTo(5 / records.length, 12);
    expect(c.state.msPerStep).not.toBe(13.3);
    c.dispose();
  });
});
