/**
 * Branches in the cell controller against a fake cell and the real engine host in-process:
 * forking from the branch form and as a finding's proposal would, switching, renaming,
 * deleting and discarding with confirmations, readouts and every branch restored from the
 * ledger without an engine, comparison, and the decision record.
 */
import { CellController } from '../../../src/ui/controller';
import type { CellHost, RecordCell } from '../../../src/ui/ports';
import { DEFAULT_SETTINGS } from '../../../src/ui/ports';
import { ledgerGlue } from '../../../src/ui/ledger-glue';
import { chipSteps } from '../../../src/ui/forms';
import { RECORD_IMAGE, RECORD_KEY } from '../../../src/ui/decision-record';
import { EngineClient } from '../../../src/worker/client';
import { inProcessPort } from '../../../src/worker/in-process';
import { realCore } from '../../../src/worker/core-adapter';
import { parseSpec, TEMPLATE_SPEC } from '../../../src/experiment';
import type { CellSummary } from '../../../src/ui/summary';

interface FakeCell extends CellHost {
  source: string;
  metadata: unknown;
  outputs: { summary: CellSummary | null; markdown: string } | null;
  records: RecordCell[];
}

function fakeCell(source = TEMPLATE_SPEC, metadata?: unknown): FakeCell {
  const cell: FakeCell = {
    source,
    metadata,
    outputs: null,
    records: [],
    readSource: () => cell.source,
    readLedger: () => (cell.metadata === undefined ? undefined : JSON.parse(JSON.stringify(cell.metadata))),
    writeLedger: v => {
      cell.metadata = JSON.parse(JSON.stringify(v));
    },
    writeOutputs: (summary, markdown) => {
      cell.outputs = { summary, markdown };
    },
    cellId: () => 'cell-1',
    findRecord: () => (cell.records.length > 0 ? 1 : null),
    writeRecord: r => {
      cell.records = [JSON.parse(JSON.stringify(r))];
    }
  };
  return cell;
}

const check = (text: string) => {
  const r = parseSpec(text);
  return r.ok ? [] : r.errors;
};

let engines = 0;
function controller(cell: FakeCell): CellController {
  return new CellController({
    host: cell,
    engine: () => {
      engines++;
      return new EngineClient(inProcessPort(realCore));
    },
    ledger: ledgerGlue,
    checkSpec: check,
    settings: () => ({ ...DEFAULT_SETTINGS, checkpointEvery: 4, checkpointCap: 5 }),
    imageOf: async () => ({ mime: 'image/png', data: 'iVBORw0KGgo=' })
  });
}

describe('branches in the cell', () => {
  it('forks from an earlier step with the branch form, steps it, and restores both branches from the ledger alone', async () => {
    const cell = fakeCell();
    const c = controller(cell);
    await c.run();
    await c.step(20);
    c.checkBranchForm('lr: -1\n');
    expect(c.state.branchProblems).toEqual([expect.objectContaining({ path: 'lr', line: 1, col: 1 })]);
    expect(await c.submitBranchForm('# a smaller step\nlr: 0.03\n', 8, 'slow')).toBe(true);
    expect(c.state.summary?.branch).toBe('slow');
    expect(c.state.summary?.step).toBe(8);
    expect(c.state.branchProblems).toEqual([]);
    await c.step(12);
    const branches = c.state.summary?.branches ?? [];
    expect(branches.map(b => [b.name, b.parent, b.forkStep, b.patchText, b.step])).toEqual([
      ['main', null, null, '', 20],
      ['slow', 'main', 8, 'lr=0.03', 20]
    ]);
    expect(cell.outputs?.markdown).toContain('| slow (shown) | main at step 8 | lr=0.03 | 20 |');
    const prints = branches.map(b => b.fingerprint);
    c.dispose();

    engines = 0;
    const again = controller(cell);
    expect(engines).toBe(0);
    expect(again.state.summary?.branch).toBe('slow');
    expect(again.state.summary?.branches.map(b => b.fingerprint)).toEqual(prints);
    expect(again.state.summary?.branches.map(b => b.loss)).toEqual(branches.map(b => b.loss));
    expect(await again.verify()).toBe(true);
    expect(again.state.verify?.map(v => [v.branch, v.match])).toEqual([['main', 'bit-identical'], ['slow', 'bit-identical']]);
    expect(again.state.notice?.text).toContain('Branch slow: replayed 20 steps from the seed: bit-identical');
    expect(await again.switchBranch('main')).toBe(true);
    expect(again.state.summary?.step).toBe(20);
    expect(await again.step(2)).toBe(true);
    expect(again.state.summary?.branches.find(b => b.name === 'slow')?.step).toBe(20);
  });

  it('makes a branch as a finding’s proposal would, refusing a setup change after step 0 with the reason', async () => {
    const cell = fakeCell();
    const c = controller(cell);
    await c.run();
    await c.step(10);
    expect(await c.forkBranch({ atStep: 6, set: { 'model.init': 'he-normal' } })).toBe(false);
    expect(c.state.notice?.text).toContain('changes the setup or the seed, so the branch must start at step 0, not step 6');
    expect(await c.forkBranch({ atStep: 0, set: { 'model.init': 'he-normal' } })).toBe(true);
    expect(c.state.summary?.branch).toBe('model.init=he-normal');
    expect(c.state.summary?.branches.find(b => b.name === 'model.init=he-normal')?.restart).toBe(true);
    expect(await c.forkBranch({ atStep: 5, set: { lr: 0.05 }, from: 'main', name: 'half' })).toBe(true);
    expect(c.state.summary?.branches.map(b => b.name)).toEqual(['main', 'model.init=he-normal', 'half']);
    // Not from an edited spec: the branch would patch text the session does not belong to.
    cell.source = TEMPLATE_SPEC + '\n# edited\n';
    c.sourceChanged();
    expect(await c.forkBranch({ atStep: 1, set: { lr: 0.01 } })).toBe(false);
    expect(c.state.notice?.text).toContain('run the cell first');
  });

  it('renames and deletes (asking first, never the root)', async () => {
    const c = controller(fakeCell());
    await c.run();
    await c.step(6);
    await c.forkBranch({ atStep: 3, set: { lr: 0.05 }, name: 'a' });
    await c.step(2);
    await c.forkBranch({ atStep: 4, set: { momentum: 0.5 }, name: 'a1' });
    expect(await c.renameBranch('a', 'half-lr')).toBe(true);
    expect(c.state.summary?.branches.find(b => b.name === 'a1')?.parent).toBe('half-lr');
    expect(await c.deleteBranch('main')).toBe(false);
    expect(c.state.notice?.text).toContain("'main' is the root branch");
    expect(await c.deleteBranch('half-lr')).toBe(false);
    expect(c.state.confirm).toEqual({ kind: 'delete', branch: 'half-lr', text: 'Delete branch half-lr and the 1 branch forked from it (a1)? Their 2+ steps are lost.' });
    expect(c.state.summary?.branches).toHaveLength(3);
    expect(await c.confirm()).toBe(true);
    expect(c.state.summary?.branches.map(b => b.name)).toEqual(['main']);
    expect(c.state.summary?.branch).toBe('main');
  });

  it('going back keeps later steps; discarding them asks first; the form offers the checkpoints the notebook keeps', async () => {
    const cell = fakeCell();
    const c = controller(cell);
    await c.run();
    await c.step(60);
    await c.rewind(30);
    expect([c.state.summary?.step, c.state.summary?.tip]).toEqual([30, 60]);
    const stored = (cell.metadata as { branches: { checkpoints: { step: number }[]; head: { step: number } }[] }).branches[0];
    // the chips are exactly the states the ledger keeps (checkpoint cap 5, head included)
    expect(chipSteps(c.state.summary?.checkpointSteps ?? [], 30, 60, 5)).toEqual([...stored.checkpoints.map(x => x.step), stored.head.step]);
    expect(await c.discardLater()).toBe(false);
    expect(c.state.confirm?.text).toBe('Discard steps 31–60 of main? They are kept now; stepping on would replay them.');
    expect(await c.confirm()).toBe(true);
    expect([c.state.summary?.step, c.state.summary?.tip]).toEqual([30, 30]);
  });

  it('keeps the latest curvature, the sharpness trace and the latest audit per branch and shows them after reopening', async () => {
    const cell = fakeCell();
    const c = controller(cell);
    await c.run();
    c.setStepN('8');
    expect(await c.trackSharpness()).toBe(true);
    expect(c.state.summary?.step).toBe(8);
    await c.measureCurvature();
    await c.audit();
    const curvature = c.state.curvature;
    const sharpness = c.state.sharpness;
    const audit = c.state.audit;
    expect(sharpness.length).toBe(9);
    c.dispose();
    engines = 0;
    const again = controller(cell);
    expect(engines).toBe(0);
    expect(again.state.curvature).toEqual(curvature);
    expect(again.state.sharpness).toEqual(sharpness);
    expect(again.state.audit?.step).toBe(8);
    expect(again.state.audit?.result.layers).toEqual(audit?.result.layers);
  });

  it('the Step ×N box sets N for Step ×N, tracking and the keyboard shortcut alike', async () => {
    const c = controller(fakeCell());
    await c.run();
    expect(c.defaultN).toBe(10);
    c.setStepN('3');
    expect(c.defaultN).toBe(3);
    await c.step();
    expect(c.state.summary?.step).toBe(3);
    c.setStepN('2.5');
    expect(c.defaultN).toBe(10);
  });
});

describe('comparison and decision record', () => {
  it('compares at matched steps and writes a record with the evidence, the recipe, the fingerprints and the figure; a second write asks', async () => {
    const cell = fakeCell();
    const c = controller(cell);
    await c.run();
    await c.step(12);
    await c.forkBranch({ atStep: 4, set: { lr: 0.02 }, name: 'slow' });
    await c.step(8);
    expect(await c.compare()).toBe(true);
    const data = c.state.comparison.data;
    expect(data?.comparison.branches).toEqual(['main', 'slow']);
    expect(data?.comparison.steps.map(s => s.step)).toEqual([4, 7, 9, 12]);
    expect(await c.writeDecisionRecord('Which learning rate?', 'slow')).toBe(true);
    expect(cell.records).toHaveLength(1);
    const r = cell.records[0];
    const tips = c.state.summary?.branches ?? [];
    for (const b of tips) expect(r.source).toContain(`\`${b.fingerprint}\``);
    expect(r.source).toContain('## Decision record: Which learning rate?');
    expect(r.source).toContain('**Chosen: branch `slow`**');
    expect(r.source).toContain('```yaml\nseed: 7');
    expect(r.source).toContain('  lr: 0.02');
    expect(r.source).toContain(`![Training loss of 2 branches by step.`);
    expect(r.source).toContain(`](attachment:${RECORD_IMAGE})`);
    expect(r.attachments).toEqual({ [RECORD_IMAGE]: { 'image/png': 'iVBORw0KGgo=' } });
    expect(r.metadata[RECORD_KEY]).toEqual(expect.objectContaining({ version: 1, cell: 'cell-1', chosen: 'slow', question: 'Which learning rate?' }));
    expect(await c.writeDecisionRecord('Which learning rate, again?', 'main')).toBe(false);
    expect(c.state.confirm?.kind).toBe('replace-record');
    expect(await c.confirm()).toBe(true);
    expect(cell.records[0].source).toContain('Which learning rate, again?');
    expect(await c.writeDecisionRecord('  ', 'main')).toBe(false);
  });
});
