/**
 * Browser entry of the demo generator: steps stepwell cells through the same controller and
 * engine host as the extension, inside headless Chromium, so the notebooks hold exactly what a
 * user of the browser app would save (and `test/unit/demo/replay.test.ts` shows they replay bit
 * for bit in Node too). Each cell follows a small script of product actions —
 * step, track the sharpness, fork a branch with a patch, write the decision record — and the
 * decision record cell is the one the product writes. Bundled by make_demos.ts with esbuild;
 * exposes `stepwellPrerun`.
 */
import { CellController } from '../src/ui/controller';
import { DEFAULT_SETTINGS } from '../src/ui/ports';
import type { CellHost, FilesRead, RecordCell } from '../src/ui/ports';
import { ledgerGlue, LEDGER_KEY } from '../src/ui/ledger-glue';
import { figureImage } from '../src/ui/plot';
import { stepwellOutput } from '../src/plugin/cell-host';
import { checkSpec } from '../src/plugin/registry';
import { EngineClient } from '../src/worker/client';
import { inProcessPort } from '../src/worker/in-process';
import { realCore } from '../src/worker/core-adapter';

/** One product action of a pre-run script. */
export type PrerunAction =
  | { do: 'step'; n: number }
  | { do: 'track'; n: number }
  | { do: 'until-diverged'; maxSteps: number }
  /** Fork from `from` (default: the shown branch) with `set`, at `atStep`; `'before-crossing'`
   * forks at the step before the first sharpness above the limit, with `lr` set to `margin` × the
   * largest stable η measured there (what the step-size finding will propose). */
  | { do: 'fork'; atStep: number | 'before-crossing'; set?: Record<string, unknown>; margin?: number; name?: string; from?: string }
  | { do: 'switch'; branch: string }
  /** Write the decision record; an empty `chosen` picks the branch the last fork made. */
  | { do: 'record'; question: string; chosen: string };

/** What to do with one cell. */
export interface PrerunRequest {
  id: string;
  spec: string;
  actions: PrerunAction[];
  /** Files beside the notebook the spec names (name → base64 bytes), read as the app's contents API would. */
  files?: Record<string, string>;
}

/** The cell's metadata and outputs after the pre-run, and the decision record it wrote. */
export interface PrerunResult {
  id: string;
  metadata: Record<string, unknown>;
  outputs: unknown[];
  record: RecordCell | null;
  /** Branch name → its step and whether the sharpness crossed the limit (for the generator's checks). */
  branches: { name: string; parent: string | null; forkStep: number | null; patch: Record<string, unknown>; step: number; loss: number }[];
  /** The fork the `before-crossing` rule chose, if any. */
  fork: { atStep: number; lr: number; lambdaMax: number } | null;
  /** Name of the branch the last fork made. */
  forked: string | null;
}

/** Rounds down to two significant digits (a proposal is a round number below the bound). */
function floor2(x: number): number {
  const e = Math.pow(10, Math.floor(Math.log10(x)) - 1);
  return Math.floor(x / e) * e;
}

async function act(c: CellController, a: PrerunAction, out: PrerunResult): Promise<boolean> {
  switch (a.do) {
    case 'step':
      return c.step(a.n);
    case 'track':
      return c.trackSharpness(a.n);
    case 'until-diverged':
      return c.runUntil({ kind: 'diverged', factor: 1e3 }, a.maxSteps);
    case 'switch':
      return c.switchBranch(a.branch);
    case 'record':
      return c.writeDecisionRecord(a.question, a.chosen || (out.forked ?? ''));
    case 'fork': {
      const made = (ok: boolean): boolean => {
        out.forked = c.state.summary?.branch ?? null;
        return ok;
      };
      if (a.atStep !== 'before-crossing') return made(await c.forkBranch({ atStep: a.atStep, set: a.set ?? {}, name: a.name, from: a.from }));
      const points = c.state.sharpness;
      const first = points.findIndex(p => p.limit !== null && p.sharpness > p.limit);
      if (first < 0) throw new Error('the sharpness never crossed the limit: no step before a crossing to fork from');
      const at = points[Math.max(0, first - 1)];
      const eta = c.state.trajectory.find(x => x.step === at.step)?.lr;
      if (at.limit === null || eta === undefined) throw new Error('no limit or learning rate to derive the proposal from');
      // limit = factor/η, so the largest stable η at this sharpness is factor/λ = limit·η/λ.
      const lr = floor2((a.margin ?? 0.9) * (at.limit * eta) / at.sharpness);
      out.fork = { atStep: at.step, lr, lambdaMax: at.lambdaMax };
      return made(await c.forkBranch({ atStep: at.step, set: { ...(a.set ?? {}), lr }, name: a.name, from: a.from }));
    }
  }
}

async function prerunOne(r: PrerunRequest): Promise<PrerunResult> {
  const out: PrerunResult = { id: r.id, metadata: {}, outputs: [], record: null, branches: [], fork: null, forked: null };
  const host: CellHost = {
    readSource: () => r.spec,
    readLedger: () => out.metadata[LEDGER_KEY],
    writeLedger: value => {
      out.metadata = { [LEDGER_KEY]: JSON.parse(JSON.stringify(value)) };
    },
    writeOutputs: (summary, md) => {
      out.outputs = [stepwellOutput(summary, md)];
    },
    readFiles: async names => {
      const read: FilesRead = { files: new Map(), problems: new Map() };
      for (const n of names) {
        const b64 = r.files?.[n];
        if (b64 === undefined) read.problems.set(n, `not found: the pre-run was given no '${n}'`);
        else read.files.set(n, Uint8Array.from(atob(b64), c => c.charCodeAt(0)));
      }
      return read;
    },
    cellId: () => r.id,
    findRecord: () => (out.record === null ? null : 0),
    writeRecord: record => {
      out.record = JSON.parse(JSON.stringify(record));
    }
  };
  const controller = new CellController({
    host,
    engine: () => new EngineClient(inProcessPort(realCore)),
    ledger: ledgerGlue,
    checkSpec,
    settings: () => DEFAULT_SETTINGS,
    imageOf: figure => figureImage(figure)
  });
  if (!(await controller.run())) throw new Error(`cell ${r.id}: the spec did not run: ${JSON.stringify(controller.state.problems)}`);
  const realNow = performance.now.bind(performance);
  for (const a of r.actions) {
    // Wall times are zeroed while stepping, so regenerating gives byte-identical notebooks.
    performance.now = a.do === 'record' ? realNow : () => 0;
    const ok = await act(controller, a, out);
    performance.now = realNow;
    if (!ok) throw new Error(`cell ${r.id}: ${a.do} failed: ${controller.state.notice?.text ?? ''}`);
  }
  // Ledgers carry a write time; fix it so regenerating gives identical files.
  (out.metadata[LEDGER_KEY] as Record<string, unknown>).savedAt = '2026-01-01T00:00:00.000Z';
  out.branches = (controller.state.summary?.branches ?? []).map(b => ({ name: b.name, parent: b.parent, forkStep: b.forkStep, patch: b.patch, step: b.step, loss: b.loss }));
  controller.dispose();
  return out;
}

/** Pre-runs every request in order. */
export async function stepwellPrerun(requests: PrerunRequest[]): Promise<PrerunResult[]> {
  const results: PrerunResult[] = [];
  for (const r of requests) results.push(await prerunOne(r));
  return results;
}

(globalThis as unknown as { stepwellPrerun: typeof stepwellPrerun }).stepwellPrerun = stepwellPrerun;
