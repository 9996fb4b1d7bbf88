/** The trailing run of zero updates (invariants of the definition; no outside numbers needed). */
import { trailingStall } from '../../../src/core/probe/stall';
import type { StepRecord } from '../../../src/core/state';

const rec = (step: number, updateNorm: number, loss = 1, gradNorm = 1): StepRecord => ({ step, loss, batchLoss: loss, gradNorm, updateNorm, lr: 1, evaluations: 1, layers: [], ms: 0 });

describe('trailingStall', () => {
  it('finds the run of zero updates that ends the trajectory', () => {
    expect(trailingStall([rec(0, 0), rec(1, 0.5), rec(2, 0), rec(3, 0), rec(4, 0)])).toEqual({ from: 2, to: 4, updates: 3 });
  });
  it.each([
    ['one zero update (may be convergence)', [rec(0, 0), rec(1, 0.5), rec(2, 0)]],
    ['a moving trajectory', [rec(0, 0), rec(1, 0), rec(2, 0), rec(3, 0.1)]],
    ['a zero gradient (a minimum, not a stall)', [rec(0, 0), rec(1, 0, 1, 0), rec(2, 0, 1, 0)]],
    ['a non-finite loss (divergence is reported elsewhere)', [rec(0, 0), rec(1, 0), rec(2, 0, NaN)]],
    ['record 0 alone', [rec(0, 0)]],
    ['nothing', []]
  ])('is null for %s', (_name, records) => {
    expect(trailingStall(records as StepRecord[])).toBeNull();
  });
});
