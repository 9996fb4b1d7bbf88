/**
 * Figures of diverging runs: values up to the largest double (1.7976931348623157e308, IEEE 754
 * binary64's largest finite number; source: IEEE 754-2019 §3.6) on linear and log axes finish
 * drawing (the padded range once overflowed to Infinity and the log axis looped over its decades).
 */
import { dataRange, makeScale } from '../../../src/figures/axis';
import { lossImage } from '../../../src/ui/summary';

const record = (step: number, loss: number) => ({ step, loss, batchLoss: 1, gradNorm: 1, updateNorm: 1, lr: 1, evaluations: 1, layers: [], ms: 0 });

describe('figures at the edge of the doubles', () => {
  it.each([
    ['log', [1e-300, 1.7976931348623157e308]],
    ['linear', [-1.7976931348623157e308, 1.7976931348623157e308]],
    ['linear', [0, 1.7976931348623157e308]]
  ] as const)('a %s axis over %p has a finite range and a bounded number of ticks', (type, values) => {
    const range = dataRange([...values], { type } as never, true);
    expect(range).not.toBeNull();
    expect(Number.isFinite(range?.lo)).toBe(true);
    expect(Number.isFinite(range?.hi)).toBe(true);
    const scale = makeScale({ type } as never, range as { lo: number; hi: number }, 0, 100);
    expect(scale.ticks.length).toBeLessThanOrEqual(700);
  });

  it('draws the loss trace of a run whose last loss is the largest double', () => {
    const image = lossImage([record(0, 0.5), record(1, 1e100), record(2, 1.7976931348623157e308)]);
    expect(image?.svg).toMatch(/^<svg/);
  });
});
