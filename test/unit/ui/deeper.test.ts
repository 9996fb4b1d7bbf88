/**
 * The Deeper tab's controller side against the real engine host in-process: the choice's
 * options become a request or an exact problem, a taken readout is kept on the branch and in the
 * written ledger, and a reopened cell shows it without starting an engine.
 */
import { TEMPLATE_SPEC } from '../../../src/experiment';
import { DEFAULT_DEEPER_CHOICE, deeperRequestOf } from '../../../src/ui/deeper-form';
import { fakeCell, controllerOf } from './fake-cell';

describe('Deeper tab choice', () => {
  it.each([
    [{ kind: 'line' }, { what: 'line', points: 41 }],
    [{ kind: 'plane', directions: 'eigenvectors', planePoints: '9' }, { what: 'plane', directions: 'eigenvectors', points: 9 }],
    [{ kind: 'range' }, { what: 'range', from: 1e-5, to: 10, steps: 40 }],
    [{ kind: 'precision', bits: '12, 6 ,3' }, { what: 'precision', bits: [12, 6, 3] }],
    [{ kind: 'batch' }, { what: 'batch', sizes: [2, 8, 32], examples: 512 }]
  ] as const)('%j makes %j', (patch, request) => {
    expect(deeperRequestOf({ ...DEFAULT_DEEPER_CHOICE, ...patch })).toEqual(request);
  });

  it.each([
    [{ kind: 'plane', planePoints: '80' }, 'points per side must be at most 61, got 80'],
    [{ kind: 'range', rangeFrom: '1', rangeTo: '0.5' }, 'the smallest learning rate (1) must be below the largest (0.5)'],
    [{ kind: 'precision', bits: '8, x' }, "significant bits must be a number, got 'x'"],
    [{ kind: 'batch', batchSizes: '4' }, 'batch sizes must list 2 to 6 sizes, got 1']
  ] as const)('%j is refused: %s', (patch, message) => {
    expect(deeperRequestOf({ ...DEFAULT_DEEPER_CHOICE, ...patch })).toBe(message);
  });
});

describe('Deeper tab in the controller', () => {
  it('takes a readout at the cursor, keeps it in the ledger, and a reopened cell shows it without an engine', async () => {
    const cell = fakeCell(TEMPLATE_SPEC);
    const c = controllerOf(cell);
    expect(await c.run()).toBe(true);
    expect(await c.step(6)).toBe(true);
    c.setDeeperChoice({ kind: 'plane', planePoints: '5' });
    expect(await c.takeDeeper()).toBe(true);
    expect(c.state.tab).toBe('deeper');
    expect(c.state.deeper.plane?.step).toBe(6);
    expect(c.state.deeper.plane?.result.alpha).toHaveLength(5);
    c.setDeeperChoice({ kind: 'precision' });
    expect(await c.takeDeeper()).toBe(true);
    expect(Object.keys(c.state.deeper).sort()).toEqual(['plane', 'precision']);
    // going back to a kept readout shows the options it was taken with, not the last typed
    c.setDeeperChoice({ kind: 'plane', planePoints: '9', directions: 'eigenvectors' });
    c.setDeeperChoice({ kind: 'line' });
    c.setDeeperChoice({ kind: 'plane' });
    expect([c.state.deeperChoice.planePoints, c.state.deeperChoice.directions]).toEqual(['5', 'random']);
    const kept = c.state.deeper;
    c.dispose();
    const engines = cell.engines;
    const reopened = controllerOf(cell);
    await new Promise(resolve => setTimeout(resolve, 0));
    expect(reopened.state.ledger).toBe('ok');
    expect(cell.engines).toBe(engines);
    expect(reopened.state.deeper).toEqual(kept);
  });

  it('a bad option says so and sends nothing', async () => {
    const cell = fakeCell(TEMPLATE_SPEC);
    const c = controllerOf(cell);
    expect(await c.run()).toBe(true);
    const before = JSON.stringify(cell.metadata);
    c.setDeeperChoice({ kind: 'range', rangeSteps: '2' });
    expect(await c.takeDeeper()).toBe(false);
    expect(c.state.notice).toEqual({ level: 'error', text: 'Learning-rate range test: rates tried must be at least 3, got 2.' });
    expect(JSON.stringify(cell.metadata)).toBe(before);
    expect(c.state.deeper).toEqual({});
  });
});
