/**
 * Findings in the cell, through the controller and the real engine host in-process: the worker
 * evaluates them after stepping, "Try as branch" forks the proposal and shows it, the ledger keeps
 * findings and the diagnosis readouts per branch and a reopened cell shows them without starting
 * an engine; Run until says when its cap ended it and refuses a growth factor that is no growth.
 *
 * The scenarios are the demo notebooks' invented ones. The check values are rules from outside:
 * gradient descent diverges for η > 2/λmax (Nocedal & Wright 2006, ch. 3; CHECKS.md) — the
 * branch with 0.9 × the measured limit must stay finite and fall far below the failing one — and
 * LeCun's fan-in rule for tanh, spread √(1/fan_in) (LeCun et al. 1998), against gain 0.05.
 */
import { greenhouseRows, greenhouseSpec, parcelRows, parcelSpec } from '../../../demo-notebooks/scenarios';
import { decodeFindings, validateLedger } from '../../../src/ledger';
import { controllerOf, fakeCell } from './fake-cell';

jest.setTimeout(120_000);

const greenhouse = greenhouseSpec(0.9, greenhouseRows(1, 60), greenhouseRows(2, 20), 'test');
const parcels = parcelSpec(0.05, parcelRows(3, 90), parcelRows(4, 30), 'test');

describe('findings in the cell', () => {
  it('finds the unstable step size, tries its proposal as a branch that stays stable, and keeps it all in the ledger', async () => {
    const cell = fakeCell(greenhouse);
    const c = controllerOf(cell);
    expect(await c.run()).toBe(true);
    expect(await c.trackSharpness(14)).toBe(true);
    const findings = c.state.diagnosis.findings;
    const i = findings.findIndex(f => f.id === 'step-size-unstable');
    expect(i).toBeGreaterThanOrEqual(0);
    const f = findings[i];
    // source: gradient descent on a quadratic converges iff η < 2/λmax (Nocedal & Wright 2006, ch. 3).
    expect(f.source).toContain('Nocedal & Wright');
    expect(f.measured).toBe(0.9);
    expect(f.threshold).toBeLessThan(0.9);
    expect(f.proposal).not.toBeNull();
    const p = f.proposal!;
    expect(p.set.lr as number).toBeLessThan(f.threshold);
    expect(c.state.diagnosis.derived.tried[i]).toBeNull();

    expect(await c.tryFinding(i)).toBe(true);
    const made = c.state.summary!.branch;
    expect(made).toBe(`lr=${p.set.lr}`);
    expect(c.state.summary!.branches.find(b => b.name === made)).toMatchObject({ parent: 'main', forkStep: p.atStep, patch: p.set });
    expect(c.state.notice?.text).toMatch(/^Trying the proposal of step-size-unstable: branch lr=/);
    expect(await c.trackSharpness(60)).toBe(true);
    const fixed = c.state.trajectory[c.state.trajectory.length - 1];
    const main = c.state.summary!.branches.find(b => b.name === 'main')!;
    expect(Number.isFinite(fixed.loss)).toBe(true);
    expect(fixed.loss).toBeLessThan(1e-3 * main.loss);
    expect(c.state.diagnosis.findings.map(x => x.id)).not.toContain('step-size-unstable');
    expect(c.state.diagnosis.derived.sharpness.verdict.kind).toBe('within');

    // Back on main the finding knows its branch: trying again shows it instead of making a second one.
    expect(await c.switchBranch('main')).toBe(true);
    expect(c.state.diagnosis.derived.tried[i]).toBe(made);
    expect(await c.tryFinding(i)).toBe(true);
    expect(c.state.summary!.branch).toBe(made);
    expect(c.state.summary!.branches).toHaveLength(2);

    // The ledger keeps every branch's findings (a non-finite measured value among them survives).
    const checked = validateLedger(cell.metadata);
    if (!checked.ok) throw new Error(checked.errors.join('; '));
    const kept = decodeFindings(checked.ledger.findings);
    expect(kept.filter(x => x.branch === 'main').map(x => x.id)).toEqual(expect.arrayContaining(['diverged', 'step-size-unstable']));
    const shown = c.state.diagnosis;
    const curvatureBefore = c.state.sharpness;
    c.dispose();

    // Reopened: the findings, the diagnosis and the sharpness come from the ledger; no engine starts.
    const engines = cell.engines;
    const again = controllerOf(cell);
    expect(again.state.summary?.branch).toBe(made);
    expect(again.state.diagnosis).toEqual(shown);
    expect(again.state.sharpness).toEqual(curvatureBefore);
    expect(cell.engines).toBe(engines);
    again.dispose();
  });

  it('shows the initialization off the fan-in rule on the plateau, and the proposal leaves the plateau', async () => {
    const cell = fakeCell(parcels);
    const c = controllerOf(cell);
    expect(await c.run()).toBe(true);
    const init = c.state.diagnosis.init!;
    // source: LeCun et al. 1998, spread √(1/fan_in) for tanh; the spec's gain 0.05 gives 1/20 of it.
    expect(init.chosen.layers[0].ruleSpread).toBeCloseTo(Math.sqrt(1 / 3), 15);
    expect(init.chosen.layers[0].ratio).toBeCloseTo(0.05, 12);
    expect(init.alternatives.map(a => a.scheme)).toEqual(['lecun-normal', 'glorot-normal', 'he-normal']);
    expect(await c.step(100)).toBe(true);
    const ids = c.state.diagnosis.findings.map(f => f.id);
    expect(ids).toEqual(expect.arrayContaining(['plateau', 'init-scale']));
    const i = ids.indexOf('init-scale');
    expect(c.state.diagnosis.findings[i].proposal).toEqual({ atStep: 0, set: { 'model.init': 'lecun-normal', 'model.gain': 1 } });
    expect(c.state.diagnosis.derived.balance?.layers).toEqual([0, 1, 2, 3]);
    expect(await c.tryFinding(i)).toBe(true);
    expect(c.state.summary!.branch).toBe('init=lecun-normal,gain=1');
    expect(await c.step(100)).toBe(true);
    const plateau = c.state.trajectory[0].loss;
    expect(c.state.trajectory[c.state.trajectory.length - 1].loss).toBeLessThan(0.5 * plateau);
    expect(c.state.diagnosis.findings.map(f => f.id)).not.toContain('plateau');
    // The plateau's proposal is the same branch: it is shown, not made twice.
    expect(await c.switchBranch('main')).toBe(true);
    expect(c.state.diagnosis.derived.tried[ids.indexOf('plateau')]).toBe('init=lecun-normal,gain=1');
    c.dispose();
  });

  it('measures the noise scale on request and keeps it with the data checks', async () => {
    const cell = fakeCell(parcels);
    const c = controllerOf(cell, { noiseSample: 90 });
    expect(await c.run()).toBe(true);
    expect(await c.measureNoise()).toBe(true);
    const n = c.state.diagnosis.noise!;
    expect([n.step, n.sampleRows, n.totalRows, n.batch]).toEqual([0, 90, 90, 30]);
    expect(c.state.diagnosis.data?.classes).toEqual({ kind: 'classes', counts: [30, 30, 30], smallestShare: 1 / 3 });
    c.dispose();
    expect(controllerOf(cell).state.diagnosis.noise).toEqual(n);
  });
});

describe('Run until', () => {
  it('says when it stopped at its cap without meeting the condition', async () => {
    const c = controllerOf(fakeCell(parcels));
    expect(await c.run()).toBe(true);
    expect(await c.runUntil({ kind: 'loss-below', value: 1e-9 }, 5)).toBe(true);
    expect(c.state.summary?.step).toBe(5);
    expect(c.state.notice).toEqual({ level: 'warn', text: 'Stopped at step 5 after the most steps allowed (5); the condition (training loss ≤ 1e-9) was not met.' });
    c.dispose();
  });

  it('refuses a growth factor of 1 or less (a plateau would "grow above" it at once)', async () => {
    const c = controllerOf(fakeCell(parcels));
    expect(await c.run()).toBe(true);
    expect(await c.runUntil({ kind: 'diverged', factor: 0.001 }, 100)).toBe(false);
    expect(c.state.summary?.step).toBe(0);
    expect(c.state.notice?.text).toBe('Run until: the factor must be above 1 (the loss grows above factor × its value at the start of the run), got 0.001. Nothing was run.');
    c.dispose();
  });
});
