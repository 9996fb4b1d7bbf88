import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { main } from '../../../src/cli/main';

const dir = mkdtempSync(join(tmpdir(), 'stepwell-probe-'));
function file(name: string, text: string): string {
  const p = join(dir, name);
  writeFileSync(p, text);
  return p;
}
async function cli(...argv: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = '', err = '';
  const code = await main(argv, { write: (s: string) => (out += s) }, { write: (s: string) => (err += s) });
  return { code, out, err };
}

/** An invented fan-controller proxy whose hidden layer uses the user's own activation. */
function fanSpec(activation: string): string {
  return `# stepwell: fan controller proxy
seed: 3
model:
  inputs: 2
  layers:
    - { units: 5, activation: ${activation} }
    - { units: 1 }
data:
  x: [[0.2, 1.0], [0.5, -0.3], [-0.8, 0.4], [1.2, 0.9], [-0.1, -1.1], [0.7, 0.2], [-0.6, -0.5], [0.9, -0.8]]
  y: [0.6, 0.1, -0.3, 1.1, -0.7, 0.4, -0.5, 0.0]
recipe: { optimizer: sgd, lr: 0.2 }
`;
}

describe('stepwell probe', () => {
  const spec = file('fan.yaml', fanSpec('{ expr: "tanh(x)" }'));

  it.each(['line', 'plane', 'range', 'precision'])('--what %s --json prints the readout at the stepped state', async (what) => {
    const r = await cli('probe', spec, '--what', what, '--steps', '5', '--points', '9', '--json');
    expect(r.err).toBe('');
    expect(r.code).toBe(0);
    const o = JSON.parse(r.out);
    expect(o.what).toBe(what);
    switch (what) {
      case 'line':
        expect(o.step).toBe(5);
        expect(o.update.t.length).toBe(9);
        expect(o.update.stepAt).toBe(1);
        expect(o.eigenvector.eigenvalue).toBeGreaterThan(0);
        break;
      case 'plane':
        expect(o.loss.length).toBe(9);
        expect(o.path.steps).toEqual([0, 1, 2, 3, 4, 5]);
        // the current weights are the plane's origin
        expect(o.path.alpha[5]).toBe(0);
        break;
      case 'range':
        expect(o.startStep).toBe(5);
        expect(o.lr.length).toBeLessThanOrEqual(9);
        expect(o.limit.formula).toBe('2/λmax');
        break;
      case 'precision':
        expect(o.rows.map((x: { bits: number }) => x.bits)).toEqual([53, 16, 10, 8, 6, 4]);
        break;
    }
  });

  it('--what batch compares batch sizes at equal examples seen beside the noise scale', async () => {
    const r = await cli('probe', spec, '--what', 'batch', '--batches', '2,full', '--examples', '32', '--json');
    expect(r.code).toBe(0);
    const o = JSON.parse(r.out);
    expect(o.runs.length).toBe(2);
    expect(o.runs.map((x: { updates: number }) => x.updates)).toEqual([16, 4]);
    expect(o.runs.map((x: { examples: number[] }) => x.examples[x.examples.length - 1])).toEqual([32, 32]);
    expect(o.noiseScale.noiseScale).toBeGreaterThan(0);
    const text = await cli('probe', spec, '--what', 'batch', '--batches', '2,full', '--examples', '32');
    expect(text.out).toMatch(/batch sizes compared at 32 examples seen each/);
    expect(text.out).toMatch(/lowest loss at equal examples: batch \d+/);
    const one = await cli('probe', spec, '--what', 'batch', '--batches', '4');
    expect(one.code).toBe(2);
    expect(one.err).toMatch(/--batches must list at least two batch sizes/);
  });

  it('prints readable text with the proxy-model note, and refuses a wrong --what', async () => {
    const r = await cli('probe', spec, '--what', 'range', '--steps', '3');
    expect(r.code).toBe(0);
    expect(r.out).toMatch(/learning-rate range test from step 3/);
    expect(r.out).toMatch(/stability limit now: 2\/λmax = /);
    expect(r.out).toMatch(/A small proxy model/);
    const bad = await cli('probe', spec, '--what', 'landscape');
    expect(bad.code).toBe(2);
    expect(bad.err).toMatch(/--what must be one of line, plane, range, precision, batch, got 'landscape'/);
    const bits = await cli('probe', spec, '--what', 'precision', '--bits', '8,0');
    expect(bits.code).toBe(2);
    expect(bits.err).toMatch(/--bits must be/);
  });

  it('journey 3 on the command line: a derivative 2% off shows in one layer of the audit; the fixed expression is right', async () => {
    const wrong = await cli('inspect', file('wrong.yaml', fanSpec('{ expr: "tanh(x)", derivative: "1.02 * (1 - tanh(x)^2)" }')));
    expect(wrong.code).toBe(0);
    expect(wrong.out).toMatch(/layer 0: max 1\.96e-2, median 1\.96e-2, wrong/);
    expect(wrong.out).toMatch(/layer 1: max [0-9.]+e-(1[0-9]|[89]), median [0-9.]+e-\d+, right/);
    const fixed = await cli('inspect', file('fixed.yaml', fanSpec('{ expr: "tanh(x)", derivative: "1 - tanh(x)^2" }')));
    expect(fixed.out).toMatch(/layer 0: max [0-9.]+e-\d+, median [0-9.]+e-\d+, right/);
  });

  it('a readout that cannot be measured is a one-line error, not a crash', async () => {
    const one = file('one.yaml', 'seed: 1\nmodel: { objective: quadratic, matrix: [[2]] }\nrecipe: { optimizer: sgd, lr: 0.1 }\n');
    const r = await cli('probe', one, '--what', 'plane', '--directions', 'eigenvectors');
    expect(r.code).toBe(2);
    expect(r.err).toBe('stepwell: a plane of eigenvectors needs at least 2 parameters\n');
  });

  it('a bad expression is an error at its line and column', async () => {
    const r = await cli('probe', file('bad.yaml', fanSpec('{ expr: "tanh(u)" }')), '--what', 'line');
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/bad\.yaml:6:45: model\.layers\[0\]\.activation\.expr: unknown symbol 'u'/);
  });
});
