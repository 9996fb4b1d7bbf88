/**
 * Browser entry of the demo generator: steps stepwell cells through the same controller
 * and engine host as the extension, inside headless Chromium, so the notebooks hold exactly
 * what a user of the browser app would save (and `test/unit/demo/replay.test.ts` shows they
 * replay bit for bit in Node). Bundled by make_demos.ts with esbuild; exposes `stepwellPrerun`.
 */
import { CellController } from '../src/ui/controller';
import { DEFAULT_SETTINGS } from '../src/ui/ports';
import type { CellHost } from '../src/ui/ports';
import { ledgerGlue, LEDGER_KEY } from '../src/ui/ledger-glue';
import { stepwellOutput } from '../src/plugin/cell-host';
import { checkSpec } from '../src/plugin/registry';
import { EngineClient } from '../src/worker/client';
import { inProcessPort } from '../src/worker/in-process';
import { realCore } from '../src/worker/core-adapter';

/** What to do with one cell. */
export interface PrerunRequest {
  id: string;
  spec: string;
  /** A number of steps, or run until the loss exceeds 1000× its start. */
  action: number | 'diverge';
}

/** The cell's metadata and outputs after the pre-run. */
export interface PrerunResult {
  id: string;
  metadata: Record<string, unknown>;
  outputs: unknown[];
}

async function prerunOne(r: PrerunRequest): Promise<PrerunResult> {
  const out: PrerunResult = { id: r.id, metadata: {}, outputs: [] };
  const host: CellHost = {
    readSource: () => r.spec,
    readLedger: () => out.metadata[LEDGER_KEY],
    writeLedger: value => {
      out.metadata = { [LEDGER_KEY]: JSON.parse(JSON.stringify(value)) };
    },
    writeOutputs: (summary, md) => {
      out.outputs = [stepwellOutput(summary, md)];
    }
  };
  const controller = new CellController({
    host,
    engine: () => new EngineClient(inProcessPort(realCore)),
    ledger: ledgerGlue,
    checkSpec,
    settings: () => DEFAULT_SETTINGS
  });
  if (!(await controller.run())) throw new Error(`cell ${r.id}: the spec did not run: ${JSON.stringify(controller.state.problems)}`);
  const ok = r.action === 'diverge' ? await controller.runUntil({ kind: 'diverged', factor: 1e3 }, 200) : await controller.step(r.action);
  if (!ok) throw new Error(`cell ${r.id}: stepping failed: ${controller.state.notice?.text ?? ''}`);
  // Ledgers carry a write time; fix it so regenerating gives identical files.
  (out.metadata[LEDGER_KEY] as Record<string, unknown>).savedAt = '2026-01-01T00:00:00.000Z';
  controller.dispose();
  return out;
}

/**
 * Pre-runs every request in order, with the page's clock stopped: the step records' wall
 * times are then 0, so regenerating gives byte-identical notebooks (and the engine host, which
 * cuts work into slices by the clock, runs each request in one slice).
 */
export async function stepwellPrerun(requests: PrerunRequest[]): Promise<PrerunResult[]> {
  const clock = performance.now;
  performance.now = () => 0;
  try {
    const results: PrerunResult[] = [];
    for (const r of requests) results.push(await prerunOne(r));
    return results;
  } finally {
    performance.now = clock;
  }
}

(globalThis as unknown as { stepwellPrerun: typeof stepwellPrerun }).stepwellPrerun = stepwellPrerun;
