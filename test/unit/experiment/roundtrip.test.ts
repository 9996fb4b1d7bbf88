/**
 * Every spec key lands in the expected place of the normalized Experiment, and every
 * omitted key takes its documented default.
 * Expected defaults: PyTorch 1.13 torch.optim documentation (lr excepted, which is ours) —
 * source: torch.optim.Adam (betas 0.9/0.999, eps 1e-8), RMSprop (alpha 0.99, eps 1e-8),
 * AdamW (weight_decay 0.01), LBFGS (history_size 10); the rest are this project's documented choices.
 */
import { parseSpec } from '../../../src/experiment';
import type { Experiment, NetworkModel } from '../../../src/core/setup';

const NET = `model:
  inputs: 2
  layers:
    - { units: 3, activation: tanh }
    - { units: 1 }
data:
  x: [[0, 1], [1, 0], [1, 1]]
  y: [0.5, -0.5, 0.25]
`;

function ok(text: string): Experiment {
  const r = parseSpec(text);
  if (!r.ok) throw new Error(r.errors.map((e) => `${e.message} @${e.line}:${e.col}`).join('\n'));
  return r.experiment;
}

/** Reads a dotted path out of the experiment for table-driven checks. */
function pick(e: Experiment, path: string): unknown {
  let v: unknown = e;
  for (const k of path.split('.')) v = (v as Record<string, unknown>)[k];
  return v instanceof Float64Array ? Array.from(v) : v;
}

describe('parseSpec: defaults', () => {
  const e = ok(NET);
  it.each<[string, unknown]>([
    ['seed', 0],
    ['setup.loss', 'mse'],
    ['setup.l2', 0],
    ['setup.model.init', 'lecun-normal'],
    ['setup.model.gain', 1],
    ['recipe.optimizer', 'sgd'],
    ['recipe.lr', 0.01],
    ['recipe.momentum', 0],
    ['recipe.nesterov', false],
    ['recipe.beta1', 0.9], // source: PyTorch 1.13 torch.optim.Adam default betas; Kingma & Ba 2015
    ['recipe.beta2', 0.999], // source: PyTorch 1.13 torch.optim.Adam default betas; Kingma & Ba 2015
    ['recipe.eps', 1e-8], // source: PyTorch 1.13 torch.optim.Adam default eps
    ['recipe.alpha', 0.99], // source: PyTorch 1.13 torch.optim.RMSprop default alpha
    ['recipe.centered', false],
    ['recipe.amsgrad', false],
    ['recipe.weightDecay', 0],
    ['recipe.batch', 'full'],
    ['recipe.schedule', { kind: 'constant' }],
    ['recipe.warmup', 0],
    ['recipe.clipNorm', 0],
    ['recipe.layers', [{ lrScale: 1 }, { lrScale: 1 }]],
    ['recipe.history', 10], // source: PyTorch 1.13 torch.optim.LBFGS default history_size
    ['recipe.lineSearch', 'strong-wolfe'],
    ['recipe.cgVariant', 'polak-ribiere'],
    ['recipe.damping', 1e-3],
    ['recipe.innerSteps', 10],
    ['recipe.curvatureBatch', 'same'],
  ])('%s defaults to %j', (path, expected) => {
    expect(pick(e, path)).toEqual(expected);
  });

  it('activation defaults to linear and data is packed row-major', () => {
    const m = e.setup.model as NetworkModel;
    expect(m.layers[1]).toEqual({ units: 1, activation: 'linear' });
    expect(e.setup.data).toMatchObject({ rows: 3, inputs: 2, targets: 1 });
    expect(Array.from(e.setup.data!.x)).toEqual([0, 1, 1, 0, 1, 1]);
    expect(e.setup.data!.x).toBeInstanceOf(Float64Array);
    expect(Array.from(e.setup.data!.y)).toEqual([0.5, -0.5, 0.25]);
  });

  it('adamw defaults weightDecay to 0.01', () => {
    // source: PyTorch 1.13 torch.optim.AdamW default weight_decay=0.01
    expect(ok(`${NET}recipe: { optimizer: adamw }\n`).recipe.weightDecay).toBe(0.01);
  });

  it('an empty recipe mapping applies every default', () => {
    expect(ok(`${NET}recipe: {}\n`).recipe).toEqual(ok(NET).recipe);
  });
});

describe('parseSpec: every key round-trips', () => {
  it.each<[string, string, [string, unknown]]>([
    ['seed', 'seed: 123456789', ['seed', 123456789]],
    ['loss', 'loss: mse', ['setup.loss', 'mse']],
    ['l2', 'regularization: { l2: 0.003 }', ['setup.l2', 0.003]],
    ['optimizer', 'recipe: { optimizer: rmsprop }', ['recipe.optimizer', 'rmsprop']],
    ['lr', 'recipe: { lr: 0.25 }', ['recipe.lr', 0.25]],
    ['momentum', 'recipe: { momentum: 0.9 }', ['recipe.momentum', 0.9]],
    ['nesterov', 'recipe: { momentum: 0.5, nesterov: true }', ['recipe.nesterov', true]],
    ['beta1', 'recipe: { optimizer: adam, beta1: 0.8 }', ['recipe.beta1', 0.8]],
    ['beta2', 'recipe: { optimizer: adam, beta2: 0.99 }', ['recipe.beta2', 0.99]],
    ['eps', 'recipe: { optimizer: adagrad, eps: 1e-6 }', ['recipe.eps', 1e-6]],
    ['alpha', 'recipe: { optimizer: rmsprop, alpha: 0.9 }', ['recipe.alpha', 0.9]],
    ['centered', 'recipe: { optimizer: rmsprop, centered: true }', ['recipe.centered', true]],
    ['amsgrad', 'recipe: { optimizer: adam, amsgrad: true }', ['recipe.amsgrad', true]],
    ['weightDecay', 'recipe: { optimizer: adamw, weightDecay: 0 }', ['recipe.weightDecay', 0]],
    ['batch', 'recipe: { batch: 2 }', ['recipe.batch', 2]],
    ['warmup', 'recipe: { warmup: 5 }', ['recipe.warmup', 5]],
    ['clipNorm', 'recipe: { clipNorm: 1.5 }', ['recipe.clipNorm', 1.5]],
    ['layers', 'recipe: { layers: [{ lrScale: 0.5 }, { lrScale: 2 }] }', ['recipe.layers', [{ lrScale: 0.5 }, { lrScale: 2 }]]],
    ['history', 'recipe: { optimizer: lbfgs, history: 4 }', ['recipe.history', 4]],
    ['lineSearch', 'recipe: { optimizer: lbfgs, lineSearch: brent }', ['recipe.lineSearch', 'brent']],
    ['cgVariant', 'recipe: { optimizer: cg, cgVariant: fletcher-reeves }', ['recipe.cgVariant', 'fletcher-reeves']],
    ['damping', 'recipe: { optimizer: newton, damping: 0.1 }', ['recipe.damping', 0.1]],
    ['innerSteps', 'recipe: { optimizer: minibatch-lbfgs, innerSteps: 3 }', ['recipe.innerSteps', 3]],
    ['curvatureBatch (size)', 'recipe: { curvatureBatch: 2 }', ['recipe.curvatureBatch', 2]],
    ['curvatureBatch (full)', 'recipe: { curvatureBatch: full }', ['recipe.curvatureBatch', 'full']],
    ['schedule constant', 'recipe: { schedule: { kind: constant } }', ['recipe.schedule', { kind: 'constant' }]],
    ['schedule step', 'recipe: { schedule: { kind: step, every: 10, factor: 0.5 } }', ['recipe.schedule', { kind: 'step', every: 10, factor: 0.5 }]],
    ['schedule step default factor', 'recipe: { schedule: { kind: step, every: 3 } }', ['recipe.schedule', { kind: 'step', every: 3, factor: 0.1 }]],
    ['schedule exponential', 'recipe: { schedule: { kind: exponential, gamma: 0.97 } }', ['recipe.schedule', { kind: 'exponential', gamma: 0.97 }]],
    ['schedule inverse-time', 'recipe: { schedule: { kind: inverse-time, decay: 0.01 } }', ['recipe.schedule', { kind: 'inverse-time', decay: 0.01 }]],
    ['schedule cosine', 'recipe: { schedule: { kind: cosine, steps: 100, floor: 0.05 } }', ['recipe.schedule', { kind: 'cosine', steps: 100, floor: 0.05 }]],
    ['schedule cosine default floor', 'recipe: { schedule: { kind: cosine, steps: 100 } }', ['recipe.schedule', { kind: 'cosine', steps: 100, floor: 0 }]],
  ])('%s', (_name, line, [path, expected]) => {
    const e = ok(`${NET}${line}\n`);
    expect(pick(e, path)).toEqual(expected);
  });

  it.each([
    ['init', 'glorot-uniform'],
    ['init', 'orthogonal'],
    ['gain', 2.5],
  ])('model.%s = %s', (key, value) => {
    const text = NET.replace('  inputs: 2\n', `  inputs: 2\n  ${key}: ${value}\n`);
    expect((ok(text).setup.model as unknown as Record<string, unknown>)[key]).toBe(value);
  });

  it('explicit weights, nested targets and a held-out split', () => {
    const e = ok(`model:
  inputs: 2
  layers: [{ units: 2, activation: relu }, { units: 2 }]
  weights:
    - { weight: [[1, 2], [3, 4]], bias: [0.1, 0.2] }
    - { weight: [[5, 6], [7, 8]], bias: [0, -1] }
data:
  x: [[0, 1], [2, 3]]
  y: [[1, 2], [3, 4]]
  heldOut: { x: [[4, 5]], y: [[6, 7]] }
`);
    const m = e.setup.model as NetworkModel;
    expect(m.weights).toEqual([
      { weight: [[1, 2], [3, 4]], bias: [0.1, 0.2] },
      { weight: [[5, 6], [7, 8]], bias: [0, -1] },
    ]);
    expect(e.setup.data!.targets).toBe(2);
    expect(Array.from(e.setup.data!.y)).toEqual([1, 2, 3, 4]);
    expect(e.setup.data!.heldOut!.rows).toBe(1);
    expect(Array.from(e.setup.data!.heldOut!.x)).toEqual([4, 5]);
    expect(Array.from(e.setup.data!.heldOut!.y)).toEqual([6, 7]);
  });

  it('binary-cross-entropy with 0/1 targets', () => {
    const e = ok(NET.replace('[0.5, -0.5, 0.25]', '[1, 0, 1]') + 'loss: binary-cross-entropy\n');
    expect(e.setup.loss).toBe('binary-cross-entropy');
    expect(Array.from(e.setup.data!.y)).toEqual([1, 0, 1]);
  });

  it.each([
    ['flat', '[0, 2, 1]'],
    ['nested', '[[0], [2], [1]]'],
  ])('cross-entropy class indices (%s form)', (_f, y) => {
    const e = ok(`model: { inputs: 1, layers: [{ units: 3 }] }\ndata: { x: [[0], [1], [2]], y: ${y} }\nloss: cross-entropy\n`);
    expect(e.setup.data!.targets).toBe(1);
    expect(Array.from(e.setup.data!.y)).toEqual([0, 2, 1]);
  });
});

describe('parseSpec: analytic objectives', () => {
  it('quadratic with defaults for center and start', () => {
    const e = ok('seed: 3\nmodel: { objective: quadratic, matrix: [[2, 1], [1, 3]] }\n');
    expect(e.setup.model).toEqual({ kind: 'quadratic', matrix: [[2, 1], [1, 3]], center: [0, 0], start: [1, 1] });
    expect(e.setup.data).toBeUndefined();
    expect(e.recipe.layers).toEqual([]);
  });
  it('quadratic with center and start', () => {
    const e = ok('model: { objective: quadratic, matrix: [[4]], center: [1], start: [-3] }\n');
    expect(e.setup.model).toEqual({ kind: 'quadratic', matrix: [[4]], center: [1], start: [-3] });
  });
  it('rosenbrock defaults its start to (-1.2, 1)', () => {
    // source: Rosenbrock 1960; Nocedal & Wright 2006 — the classic start (-1.2, 1)
    expect(ok('model: { objective: rosenbrock }\n').setup.model).toEqual({ kind: 'rosenbrock', start: [-1.2, 1] });
    expect(ok('model: { objective: rosenbrock, start: [0, 0] }\n').setup.model).toEqual({ kind: 'rosenbrock', start: [0, 0] });
  });
  it('a matrix asymmetric only by rounding (within 1e-12 relative) is accepted', () => {
    expect(parseSpec('model: { objective: quadratic, matrix: [[1, 0.3], [0.30000000000000004, 1]] }\n').ok).toBe(true);
  });
});
