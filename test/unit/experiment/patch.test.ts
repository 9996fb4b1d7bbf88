/** Spec patches: key grammar, application to the spec value, validation like a spec (invariants only). */
import { parseSpec } from '../../../src/experiment';
import type { Recipe } from '../../../src/core/setup';
import { applyPatch, applyPatches, checkPatchText, parseAssignments, parsePatchText, patchChainExperiment, patchExperiment, patchPath, recipeExcerpt, splitAssignments, touchesSetup } from '../../../src/experiment/patch';

const SPEC = `seed: 3
model:
  inputs: 2
  layers:
    - { units: 4, activation: tanh }
    - { units: 1, activation: linear }
data:
  x: [[0.1, 0.2], [0.3, -0.4], [0.5, 0.6]]
  y: [[1], [0], [1]]
recipe: { optimizer: sgd, lr: 0.1 }
`;

describe('patch keys', () => {
  it.each([
    ['lr', 'recipe.lr'],
    ['momentum', 'recipe.momentum'],
    ['layers[1].lrScale', 'recipe.layers.1.lrScale'],
    ['model.init', 'model.init'],
    ['data.standardize', 'data.standardize'],
    ['recipe.lr', 'recipe.lr'],
    ['seed', 'seed']
  ])('%s resolves to %s', (key, path) => {
    const p = patchPath(key);
    expect(p.ok && p.path.join('.')).toBe(path);
  });

  it.each(['__proto__', 'recipe.__proto__', 'constructor', 'lr;rm', '', 'layers[x]'])('refuses %j', (key) => {
    expect(patchPath(key).ok).toBe(false);
  });

  it('suggests the nearest key for a misspelling', () => {
    const p = patchPath('momentun');
    expect(p.ok ? '' : p.message).toMatch(/did you mean 'momentum'/);
  });

  it('tells setup keys from recipe keys', () => {
    expect(touchesSetup({ lr: 0.1, 'layers[0].lrScale': 2 })).toBe(false);
    expect(touchesSetup({ lr: 0.1, 'model.init': 'he-normal' })).toBe(true);
    expect(touchesSetup({ seed: 4 })).toBe(true);
  });
});

describe('assignments and patch text', () => {
  it('reads KEY=VALUE as YAML values and keeps flow collections whole', () => {
    expect(splitAssignments('lr=0.05, schedule={kind: cosine, steps: 100},batch=8')).toEqual(['lr=0.05', 'schedule={kind: cosine, steps: 100}', 'batch=8']);
    const r = parseAssignments(['lr=0.05', 'batch=full', 'schedule={kind: cosine, steps: 100}', 'data.standardize=true']);
    expect(r).toEqual({ ok: true, patch: { lr: 0.05, batch: 'full', schedule: { kind: 'cosine', steps: 100 }, 'data.standardize': true } });
  });

  it('names the bad assignment and shortens long garbage', () => {
    const r = parseAssignments(['lr', 'x'.repeat(5000) + '=1']);
    expect(r.ok).toBe(false);
    if (r.ok) return;
    expect(r.errors[0]).toMatch(/expected KEY=VALUE, got "lr"/);
    expect(r.errors[1].length).toBeLessThan(300); // 5 000 characters in, a bounded message out
  });

  it('reads patch text with positions of bad keys', () => {
    expect(parsePatchText('lr: 0.05\nmodel.init: he-normal\n')).toEqual({ ok: true, patch: { lr: 0.05, 'model.init': 'he-normal' } });
    const r = parsePatchText('lr: 0.05\nmomentun: 0.9\n');
    expect(r.ok ? null : r.errors[0]).toMatchObject({ line: 2, col: 1 });
    expect(parsePatchText('- lr\n').ok).toBe(false);
    expect(parsePatchText('a: &a [1]\nb: &b [*a, *a, *a, *a, *a, *a, *a, *a, *a, *a]\nc: [*b, *b, *b, *b, *b, *b, *b, *b, *b, *b]\n').ok).toBe(false);
  });
});

describe('applying a patch', () => {
  const base = parseSpec(SPEC);
  if (!base.ok) throw new Error('fixture spec must parse');

  it('changes exactly the patched keys and leaves the input untouched', () => {
    const r = patchExperiment(SPEC, { lr: 0.05, momentum: 0.9 });
    expect(r.ok).toBe(true);
    if (!r.ok) return;
    expect(r.experiment.recipe).toEqual({ ...base.experiment.recipe, lr: 0.05, momentum: 0.9 });
    expect(r.experiment.setup.model).toEqual(base.experiment.setup.model);
  });

  it('creates recipe.layers with lrScale 1 per layer when one layer is patched', () => {
    const r = patchExperiment(SPEC, { 'layers[1].lrScale': 0.25 });
    expect(r.ok && r.experiment.recipe.layers).toEqual([{ lrScale: 1 }, { lrScale: 0.25 }]);
  });

  it('patches the setup', () => {
    const r = patchExperiment(SPEC, { 'model.init': 'he-normal', 'model.gain': 2 });
    expect(r.ok && r.experiment.setup.model).toMatchObject({ init: 'he-normal', gain: 2 });
  });

  it('reports a bad value with the spec message, naming the key', () => {
    const r = patchExperiment(SPEC, { lr: -1 });
    expect(r.ok ? '' : r.errors.map((e) => e.message).join('\n')).toMatch(/^patch 'lr': recipe\.lr/);
  });

  it('refuses an index past the end of a list', () => {
    const value = { model: { layers: [{}, {}] }, recipe: {} };
    const r = applyPatch(value, { 'layers[5].lrScale': 2 });
    expect(r.ok ? '' : r.errors[0].message).toMatch(/has 2 entries, so index 5 does not exist/);
    expect(value).toEqual({ model: { layers: [{}, {}] }, recipe: {} });
  });
});

describe('a branch’s ancestry of patches', () => {
  it('applies patches in order: a later key wins, the first patch is kept where not overridden', () => {
    const r = patchChainExperiment(SPEC, [{ lr: 0.05, momentum: 0.9 }, { lr: 0.01 }]);
    expect(r.ok && [r.experiment.recipe.lr, r.experiment.recipe.momentum]).toEqual([0.01, 0.9]);
    const none = patchChainExperiment(SPEC, []);
    expect(none.ok && none.experiment.recipe.lr).toBe(0.1);
    const alias = applyPatches({ recipe: { lr: 1 } }, [{ lr: 2 }, { 'recipe.lr': 3 }]);
    expect(alias.ok && alias.value).toEqual({ recipe: { lr: 3 } });
  });

  it('names the patched key when a later patch breaks the spec', () => {
    const r = patchChainExperiment(SPEC, [{ lr: 0.05 }, { momentum: -1 }]);
    expect(r.ok ? '' : r.errors.map((e) => e.message).join('\n')).toMatch(/^patch 'momentum': recipe\.momentum/);
  });

  it('writes the recipe excerpt a colleague needs: seed, the patched recipe, and setup keys a patch set', () => {
    const r = recipeExcerpt(SPEC, [{ 'model.init': 'he-normal' }, { lr: 0.02 }]);
    expect(r).toEqual({ ok: true, yaml: 'seed: 3\nmodel:\n  init: he-normal\nrecipe:\n  optimizer: sgd\n  lr: 0.02\n' });
    const listed = recipeExcerpt(SPEC, [{ 'model.layers[0].activation': 'relu' }]);
    expect(listed.ok && listed.yaml).toContain('layers:\n    - units: 4\n      activation: relu\n');
  });
});

describe('the branch form', () => {
  it('accepts a valid patch and places a bad value at its key’s line', () => {
    expect(checkPatchText(SPEC, [{ lr: 0.05 }], 'momentum: 0.9\n')).toEqual({ ok: true, patch: { momentum: 0.9 } });
    const r = checkPatchText(SPEC, [], '# smaller step\nmomentum: 0.5\nlr: -2\n');
    expect(r.ok ? [] : r.errors).toEqual([expect.objectContaining({ path: 'lr', line: 3, col: 1 })]);
    expect(r.ok ? '' : r.errors[0].message).toMatch(/^patch 'lr': recipe\.lr/);
    const syntax = checkPatchText(SPEC, [], 'lr: [0.1\n');
    expect(syntax.ok ? [] : syntax.errors[0].line).toBeDefined();
  });
});

describe('the recipe options that mirror PyTorch go through patches', () => {
  it.each<[string, string[], (r: Recipe) => unknown, unknown]>([
    ['dampening', ['momentum=0.9', 'dampening=0.1'], (r) => r.dampening, 0.1],
    ['clipValue', ['clipValue=0.5'], (r) => r.clipValue, 0.5],
    ['decayBiases', ['weightDecay=0.01', 'decayBiases=false'], (r) => r.decayBiases, false],
    ['plateau schedule', ['schedule={kind: plateau, patience: 3}'], (r) => r.schedule, { kind: 'plateau', factor: 0.1, patience: 3, threshold: 1e-4, thresholdMode: 'rel', cooldown: 0, floor: 0 }],
    ['sequence schedule', ['schedule={kind: sequence, phases: [{kind: factor, factor: 0.5, steps: 2}, {kind: exponential, gamma: 0.9}], milestones: [3]}'], (r) => r.schedule.kind, 'sequence'],
  ])('%s', (_n, assignments, pick, want) => {
    const p = parseAssignments(assignments);
    if (!p.ok) throw new Error(p.errors.join('; '));
    const r = patchExperiment(SPEC, p.patch);
    if (!r.ok) throw new Error(JSON.stringify(r.errors));
    expect(pick(r.experiment.recipe)).toEqual(want);
  });
  it('a bad value names the patched key', () => {
    const r = patchExperiment(SPEC, { maxIter: 0 });
    expect(!r.ok && r.errors[0].message).toBe("patch 'maxIter': recipe.maxIter must be a positive integer, got 0");
  });
});
