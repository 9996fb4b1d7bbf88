/**
 * Branches that differ only in batch size are recognised in the worker's comparison reply (the
 * compare panel then draws them by examples seen beside the noise scale); any other patched key
 * in a compared branch's ancestry, or a single batch size, is not.
 */
import { EngineHost } from '../../../src/worker/engine-host';
import { realCore } from '../../../src/worker/core-adapter';
import type { EngineReply } from '../../../src/worker/protocol';
import { TEMPLATE_SPEC } from '../../../src/experiment';

async function host() {
  const replies: EngineReply[] = [];
  const h = new EngineHost(realCore, r => replies.push(structuredClone(r)));
  await h.receive({ id: 1, kind: 'load', specText: TEMPLATE_SPEC, checkpointEvery: 5 });
  await h.receive({ id: 2, kind: 'step', n: 4 });
  return { h, last: () => replies[replies.length - 1] };
}

describe('batch-only comparisons', () => {
  it('names each branch\'s batch size when only the batch differs, and null otherwise', async () => {
    const { h, last } = await host();
    await h.receive({ id: 3, kind: 'fork', step: 2, patch: { batch: 4 }, name: 'b4', from: 'main' });
    await h.receive({ id: 4, kind: 'fork', step: 2, patch: { batch: 2 }, name: 'b2', from: 'b4' });
    await h.receive({ id: 5, kind: 'fork', step: 2, patch: { lr: 0.05 }, name: 'slow', from: 'main' });
    await h.receive({ id: 6, kind: 'fork', step: 2, patch: { batch: 4 }, name: 'slow-b4', from: 'slow' });
    const cases: [string[], unknown][] = [
      [['main', 'b4', 'b2'], [{ name: 'main', batch: 8, full: true }, { name: 'b4', batch: 4, full: false }, { name: 'b2', batch: 2, full: false }]],
      [['main', 'slow'], null],
      [['main', 'slow-b4'], null],
      [['b4'], null]
    ];
    expect(cases).toHaveLength(4);
    for (const [names, expected] of cases) {
      await h.receive({ id: 7, kind: 'compare', branches: names });
      const r = last();
      expect(r.kind).toBe('comparison');
      if (r.kind === 'comparison') expect([names, r.batchOnly]).toEqual([names, expected]);
    }
  });
});
