import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { main } from '../../../src/cli/main';
import { branchArgument } from '../../../src/cli/diagnose';
import { kilnSpec, seedSpec, tryProposal } from '../findings/scenarios';

const dir = mkdtempSync(join(tmpdir(), 'stepwell-diagnose-'));
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

const KEYS = ['id', 'severity', 'layer', 'step', 'measured', 'threshold', 'source', 'statement', 'proposal'];

describe('stepwell diagnose', () => {
  const warm = kilnSpec({ recipe: '{ optimizer: sgd, lr: 0.8, warmup: 30 }' });

  it('prints exactly {steps, final: {loss}, findings: [...]} with the contract\'s keys, 100 steps by default', async () => {
    const r = await cli('diagnose', file('warm.yaml', warm), '--json');
    expect(r.code).toBe(0);
    const o = JSON.parse(r.out);
    expect(Object.keys(o)).toEqual(['steps', 'final', 'findings']);
    expect(o.steps).toBe(100);
    expect(Object.keys(o.final)).toEqual(['loss']);
    expect(o.findings.length).toBeGreaterThan(0);
    for (const f of o.findings) {
      expect(Object.keys(f)).toEqual(KEYS);
      if (f.proposal !== null) expect(Object.keys(f.proposal)).toEqual(['atStep', 'set']);
    }
    expect(o.findings.map((f: { id: string }) => f.id)).toEqual(expect.arrayContaining(['diverged', 'step-size-unstable']));
  });

  it('without --json prints a readable list with the source and the --branch to try', async () => {
    const path = file('warm2.yaml', warm);
    const r = await cli('diagnose', path, '--steps', '40');
    expect(r.code).toBe(0);
    expect(r.out).toMatch(/^40 steps; final loss/);
    expect(r.out).toMatch(/PROBLEM +step-size-unstable \(step 12\): measured 0\.347 against 0\.305/);
    expect(r.out).toMatch(/threshold: source: gradient descent on a quadratic/);
    expect(r.out).toContain(`try: stepwell run ${path} --steps 40 --branch 9:lr=0.274`);
    expect(r.out).toMatch(/small proxy model/);
  });

  it('rejects a bad step count with the flag named', async () => {
    const r = await cli('diagnose', file('w3.yaml', warm), '--steps', 'many');
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/--steps must be a non-negative integer in decimal digits, got 'many'/);
  });

  const w = [[0.9, -0.4], [-0.7, 0.8], [0.5, 0.6], [-0.6, -0.5], [0.8, 0.3], [-0.3, 0.9], [0.4, -0.8], [-0.9, -0.2]];
  const out = [[0.5, -0.3, 0.2, 0.4, -0.5, 0.3, -0.2, 0.1], [-0.4, 0.5, -0.1, 0.2, 0.3, -0.5, 0.4, -0.3], [0.2, 0.1, 0.5, -0.4, -0.2, 0.4, 0.3, 0.5]];
  const cases: [string, string, number][] = [
    ['a warm-up past the limit (lr)', warm, 100],
    ['an oversized init (model.init, model.gain)', kilnSpec({ model: '  init: lecun-normal\n  gain: 6' }), 60],
    ['raw kiln readings (data.standardize, lr)', kilnSpec({ scaled: false, recipe: '{ optimizer: sgd, lr: 0.00001 }' }), 60],
    ['dead units from negative biases (model.weights[0].bias[u])', seedSpec({ model: `  weights:\n    - { weight: ${JSON.stringify(w)}, bias: [0, 0, -6, -6, -6, -6, -6, -6] }\n    - { weight: ${JSON.stringify(out)}, bias: [0, 0, 0] }` }), 40],
    ['five sigmoid layers (model.layers[i].activation)', kilnSpec({ layers: `[${Array(5).fill('{ units: 8, activation: sigmoid }').join(', ')}, { units: 1 }]`, recipe: '{ optimizer: sgd, lr: 0.2 }' }), 60],
    ['a slowed first layer (layers[i].lrScale)', kilnSpec({ recipe: '{ optimizer: sgd, lr: 0.05, layers: [{ lrScale: 0.0001 }, { lrScale: 1 }] }' }), 60],
    ['an ill-conditioned quadratic (optimizer, lr, momentum)', 'seed: 1\nmodel: { objective: quadratic, matrix: [[100, 0, 0], [0, 1, 0], [0, 0, 0.001]] }\nrecipe: { optimizer: sgd, lr: 0.019, momentum: 0.5 }\n', 10],
    ['a memorizing net (schedule.kind, schedule.steps, schedule.floor)', kilnSpec({ rows: 16, heldOut: 40, noise: 0.3, layers: '[{ units: 48, activation: tanh }, { units: 1 }]', recipe: '{ optimizer: sgd, lr: 0.1 }' }), 300],
  ];

  it.each(cases)('every proposal for %s is accepted verbatim by stepwell run --branch and gives the branch the grove gives', async (name, text, steps) => {
    const path = file(`${name.replace(/\W+/g, '-')}.yaml`, text);
    const d = await cli('diagnose', path, '--json', '--steps', String(steps));
    expect(d.code).toBe(0);
    const proposals = (JSON.parse(d.out).findings as { proposal: { atStep: number; set: Record<string, string | number | boolean> } | null }[]).map((f) => f.proposal).filter((p) => p !== null);
    expect(proposals.length).toBeGreaterThan(0);
    for (const p of proposals) {
      const arg = branchArgument(p!);
      const r = await cli('run', path, '--steps', String(steps), '--json', '--branch', arg);
      // Exit 3 says the failing main branch went non-finite; the proposal's branch must not. Only warnings on stderr.
      expect({ arg, code: r.code === 3 ? 0 : r.code, errors: r.err.split('\n').filter((l) => l !== '' && !l.startsWith('stepwell: warning:')) }).toEqual({ arg, code: 0, errors: [] });
      const o = JSON.parse(r.out);
      expect(o.branch.at).toBe(p!.atStep);
      expect(o.branch.divergedAt).toBeUndefined();
      const direct = tryProposal(text, p!, steps);
      expect(o.branch.final.loss).toBe(direct.fixed);
    }
  });

  it('stepwell run --set data.standardize=true runs the standardized setup', async () => {
    const path = file('raw.yaml', kilnSpec({ scaled: false }));
    const plain = JSON.parse((await cli('run', path, '--steps', '3', '--json')).out);
    const std = await cli('run', path, '--steps', '3', '--json', '--set', 'data.standardize=true');
    expect(std.code).toBe(0);
    expect(JSON.parse(std.out).final.loss).not.toBe(plain.final.loss);
    const bad = await cli('run', path, '--steps', '3', '--set', 'data.standardize=sometimes');
    expect(bad.code).toBe(2);
    expect(bad.err).toMatch(/data\.standardize/);
  });
});
