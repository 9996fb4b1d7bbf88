import { describeSetup } from '../../../src/worker/describe';
import { parseSpec, formatSpecError } from '../../../src/experiment';

describe('describeSetup', () => {
  it('names the user\'s own activation and loss by their formulas', () => {
    const r = parseSpec(`seed: 1
model: { inputs: 2, layers: [{ units: 3, activation: { expr: "x / (1 + abs(x))" } }, { units: 1 }] }
data: { x: [[0, 1], [1, 0]], y: [1, 0] }
loss: { expr: "log(cosh(y - t))" }
`);
    if (!r.ok) throw new Error(r.errors.map(formatSpecError).join('\n'));
    expect(describeSetup(r.experiment.setup)).toBe('network 2→3 f(x) = x / (1 + abs(x))→1 linear, loss log(cosh(y - t)), 2 rows');
  });
});
