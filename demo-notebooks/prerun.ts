/**
 * Browser entry of the demo generator: steps stepwell cells through the same controller and
 * engine host as the extension, inside headless Chromium, so the notebooks hold exactly what a
 * user of the browser app would save (and `test/unit/demo/replay.test.ts` shows they replay bit
 * for bit in Node too). Each cell follows a small script of product actions — step, track the
 * sharpness, "Try as branch" on a finding, measure, write the decision record — and the decision
 * record cell is the one the product writes. Bundled by make_demos.ts with esbuild;
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
import type { DiagnosisView } from '../src/ui/view-state';
import type { DeeperChoice } from '../src/ui/deeper-form';

/** One product action of a pre-run script. */
export type PrerunAction =
  | { do: 'step'; n: number }
  | { do: 'track'; n: number }
  | { do: 'until-diverged'; maxSteps: number }
  /** "Try as branch" on the shown branch's finding with this id (the first of them). */
  | { do: 'try'; finding: string }
  | { do: 'fork'; atStep: number; set: Record<string, unknown>; name?: string; from?: string }
  | { do: 'curvature' }
  | { do: 'audit' }
  | { do: 'noise' }
  | { do: 'switch'; branch: string }
  /** Take a deeper readout on the Deeper tab with these choices (the rest as the tab starts). */
  | { do: 'deeper'; choice: Partial<DeeperChoice> }
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
  /** Every branch with its origin, cursor and loss (for the generator's checks). */
  branches: { name: string; parent: string | null; forkStep: number | null; patch: Record<string, unknown>; step: number; loss: number }[];
  /** What the cell showed of each branch when it was last shown: its findings and diagnosis readouts (the prose quotes them). */
  diagnoses: Record<string, DiagnosisView>;
  /** The branch the last fork made, and the finding whose proposal it tried. */
  forked: string | null;
  tried: string | null;
}

async function act(c: CellController, a: PrerunAction, out: PrerunResult): Promise<boolean> {
  const made = (ok: boolean): boolean => {
    out.forked = c.state.summary?.branch ?? null;
    return ok;
  };
  switch (a.do) {
    case 'step':
      return c.step(a.n);
    case 'track':
      return c.trackSharpness(a.n);
    case 'until-diverged':
      return c.runUntil({ kind: 'diverged', factor: 1e3 }, a.maxSteps);
    case 'switch':
      return c.switchBranch(a.branch);
    case 'curvature':
      return c.measureCurvature();
    case 'audit':
      return c.audit();
    case 'noise':
      return c.measureNoise();
    case 'deeper':
      c.setDeeperChoice(a.choice);
      return c.takeDeeper();
    case 'record':
      return c.writeDecisionRecord(a.question, a.chosen || (out.forked ?? ''));
    case 'fork':
      return made(await c.forkBranch({ atStep: a.atStep, set: a.set, name: a.name, from: a.from }));
    case 'try': {
      const i = c.state.diagnosis.findings.findIndex(f => f.id === a.finding);
      if (i < 0) throw new Error(`no finding '${a.finding}' on branch ${c.state.summary?.branch}: ${c.state.diagnosis.findings.map(f => f.id).join(', ')}`);
      out.tried = a.finding;
      return made(await c.tryFinding(i));
    }
  }
}

async function prerunOne(r: PrerunRequest): Promise<PrerunResult> {
  const out: PrerunResult = { id: r.id, metadata: {}, outputs: [], record: null, branches: [], diagnoses: {}, forked: null, tried: null };
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
    const shown = controller.state.summary?.branch;
    if (shown !== undefined) out.diagnoses[shown] = JSON.parse(JSON.stringify(controller.state.diagnosis));
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
