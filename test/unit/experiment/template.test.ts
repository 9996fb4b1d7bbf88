/** The starting text of a new cell parses cleanly; warnings flag legal but suspicious specs; schema defaults agree with the parser. */
import { parseSpec, RECIPE_DEFAULTS, TEMPLATE_SPEC } from '../../../src/experiment';
import schema from '../../../src/experiment/spec.schema.json';

describe('TEMPLATE_SPEC', () => {
  it('parses without errors or warnings into a small regression experiment', () => {
    const r = parseSpec(TEMPLATE_SPEC);
    expect(r.ok).toBe(true);
    if (!r.ok) return;
    expect(r.warnings).toEqual([]);
    const { setup } = r.experiment;
    expect(setup.model.kind).toBe('network');
    expect(setup.loss).toBe('mse');
    expect(setup.data!.rows).toBeGreaterThanOrEqual(4);
    expect(setup.data!.x.length).toBe(setup.data!.rows * setup.data!.inputs);
  });
  it('explains its keys in comments and says a small model is no guarantee at scale', () => {
    expect(TEMPLATE_SPEC).toMatch(/not a guarantee at scale/);
    for (const key of ['seed:', 'inputs:', 'layers:', 'init:', 'loss:', 'regularization:', 'optimizer:', 'lr:', 'batch:']) {
      const line = TEMPLATE_SPEC.split('\n').find((l) => l.trimStart().startsWith(key));
      expect(line).toMatch(/#/);
    }
  });
});

describe('parseSpec: warnings', () => {
  const NET = (extra: string, last = '{ units: 3 }', loss = 'cross-entropy') =>
    `seed: 1\nmodel: { inputs: 1, layers: [${last}] }\ndata: { x: [[0], [1]], y: [0, 2] }\nloss: ${loss}\n${extra}`;
  it.each<[string, string, string, string, number]>([
    ['cross-entropy after tanh', NET('', '{ units: 3, activation: tanh }'), 'model.layers[0].activation', 'cross-entropy applies softmax itself; a final tanh squashes the logits', 2],
    ['binary-cross-entropy after sigmoid', 'seed: 1\nmodel: { inputs: 1, layers: [{ units: 1, activation: sigmoid }] }\ndata: { x: [[0], [1]], y: [0, 1] }\nloss: binary-cross-entropy\n', 'model.layers[0].activation', 'binary-cross-entropy takes logits and applies the sigmoid itself; a final sigmoid squashes the logits', 2],
    ['optimizer key that has no effect', NET('recipe: { optimizer: sgd, beta1: 0.8 }\n'), 'recipe.beta1', 'recipe.beta1 applies to adam and adamw, not to sgd, so it has no effect', 5],
    ['momentum of 1 or more', NET('recipe: { momentum: 1.2 }\n'), 'recipe.momentum', 'recipe.momentum is 1.2; with μ ≥ 1 the velocity never decays and the iteration cannot settle', 5],
    ['init next to explicit weights', 'seed: 1\nmodel:\n  inputs: 1\n  init: he-normal\n  layers: [{ units: 1 }]\n  weights: [{ weight: [[2]], bias: [0] }]\ndata: { x: [[1]], y: [2] }\n', 'model.init', 'model.init is ignored because model.weights gives the initial parameters', 4],
    ['no seed', NET('').replace('seed: 1\n', ''), '', 'no seed given, so seed 0 is used; write seed: explicitly so the notebook states it', 1],
    ['data on an objective', 'seed: 1\nmodel: { objective: rosenbrock }\ndata: { x: [[1]], y: [1] }\n', 'data', 'data is not used by the rosenbrock objective and is ignored', 3],
    ['l2 on an objective', 'seed: 1\nmodel: { objective: rosenbrock }\nregularization: { l2: 0.1 }\n', 'regularization.l2', 'regularization.l2 penalizes network weight matrices; the rosenbrock objective has none, so it has no effect', 3],
  ])('%s', (_name, text, path, message, line) => {
    const r = parseSpec(text);
    expect(r.ok).toBe(true);
    if (!r.ok) return;
    expect(r.warnings.filter((w) => w.path === path)).toEqual([expect.objectContaining({ message, line })]);
  });
});

describe('schema and parser agree on defaults', () => {
  const props = (schema.definitions.recipe.properties as Record<string, { default?: unknown }>);
  it.each(Object.keys(props).filter((k) => props[k].default !== undefined))('recipe.%s', (key) => {
    expect(props[key].default).toEqual((RECIPE_DEFAULTS as unknown as Record<string, unknown>)[key]);
  });
  it('documents every Recipe key', () => {
    const expected = [...Object.keys(RECIPE_DEFAULTS), 'layers', 'schedule'].sort();
    expect(Object.keys(props).sort()).toEqual(expected);
  });
});
