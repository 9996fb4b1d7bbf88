/**
 * Building a cell's ledger (what the notebook stores after every action) for the benchmark's
 * large network after one update: the weights, and with Adam its two moment buffers, encoded,
 * fingerprinted and validated. The engine worker does this after each step or readout, so the
 * next action waits for it when it comes sooner.
 */
import { EngineHost } from '../../src/worker/engine-host';
import { realCore } from '../../src/worker/core-adapter';
import type { EngineReply } from '../../src/worker/protocol';
import { buildMlp } from './networks';
import type { BenchResult } from './types';

export const title = 'Ledger: building the notebook ledger after one update (64-256-256-10 ReLU, 512 rows, P = 85 002)';

function specText(optimizer: string): string {
  const c = { widths: [64, 256, 256, 10], act: 'relu' as const, loss: 'cross-entropy' as const, batch: 512 };
  const { x, y } = buildMlp(c, 1);
  const rows = Array.from({ length: c.batch }, (_, r) => Array.from(x.subarray(r * 64, (r + 1) * 64), (v) => Number(v.toFixed(4))));
  const model = { inputs: 64, layers: [{ units: 256, activation: 'relu' }, { units: 256, activation: 'relu' }, { units: 10, activation: 'linear' }] };
  return `# stepwell: benchmark network\n${JSON.stringify({ seed: 5, model, data: { x: rows, y: Array.from(y) }, loss: 'cross-entropy', recipe: { optimizer, lr: 0.001 } })}\n`;
}

export async function run(): Promise<BenchResult[]> {
  const out: BenchResult[] = [];
  for (const optimizer of ['sgd', 'adam']) {
    const spec = specText(optimizer);
    const replies: EngineReply[] = [];
    const host = new EngineHost(realCore, (r) => replies.push(r));
    await host.receive({ id: 1, kind: 'load', specText: spec, checkpointEvery: 0 });
    await host.receive({ id: 2, kind: 'step', n: 1 });
    let bytes = 0;
    const build = async (): Promise<number> => {
      const t0 = performance.now();
      await host.receive({ id: 3, kind: 'ledger', specText: spec, checkpointCap: 20 });
      const ms = performance.now() - t0;
      const last = replies[replies.length - 1];
      if (last.kind !== 'ledger') throw new Error(`expected a ledger, got ${last.kind}`);
      bytes = last.bytes;
      return ms;
    };
    for (let i = 0; i < 3; i++) await build();
    const times: number[] = [];
    for (let i = 0; i < 15; i++) times.push(await build());
    times.sort((a, b) => a - b);
    const t = { ms: times[times.length >> 1], reps: times.length };
    out.push({ name: `${optimizer}, after one update`, ...t, extra: { MB: Number((bytes / 1e6).toFixed(2)) } });
  }
  return out;
}
