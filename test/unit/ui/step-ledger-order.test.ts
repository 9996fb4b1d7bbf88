/**
 * Step Once asks the worker for the ledger before the page draws the step: the worker builds it
 * while the page redraws, instead of after, where the next click's step would queue behind it.
 * The ledger written is still the one of the step shown.
 */
import { TEMPLATE_SPEC } from '../../../src/experiment';
import { controllerOf, fakeCell } from './fake-cell';

describe('Step and the ledger write', () => {
  it('sends the ledger request before the step is drawn, and writes the ledger of that step', async () => {
    const cell = fakeCell(TEMPLATE_SPEC);
    const events: string[] = [];
    const c = controllerOf(cell, {}, {}, port => {
      const post = port.postMessage.bind(port);
      port.postMessage = (message, transfer) => {
        events.push(`request ${(message as { kind: string }).kind}`);
        post(message, transfer);
      };
      return port;
    });
    expect(await c.run()).toBe(true);
    let shown = -1;
    c.changed.connect((_, s) => {
      const step = s.summary?.step ?? -1;
      if (s.busy === null && step !== shown) {
        shown = step;
        events.push(`drawn step ${step}`);
      }
    });
    events.length = 0;
    expect(await c.step(1)).toBe(true);
    expect(events.slice(0, 3)).toEqual(['request step', 'request ledger', 'drawn step 1']);
    const head = (cell.metadata as { branches: { head: { step: number } }[] }).branches[0].head;
    expect(head.step).toBe(1);
    c.dispose();
  });
});
