/**
 * Each class of spec error names the right path and points at the right line and column;
 * all errors are reported at once, sorted by position. Positions are counted by hand
 * from the fixtures (1-based lines and columns).
 */
import { rowRanges } from '../../../src/experiment/checks';
import { DEFAULT_SPEC_LIMITS, formatSpecError, MAX_PROBLEMS, parseLimits, parseSpec } from '../../../src/experiment';
import type { SpecError } from '../../../src/experiment';

function errors(text: string, format?: 'auto' | 'yaml' | 'json'): SpecError[] {
  const r = parseSpec(text, format);
  if (r.ok) throw new Error('expected the spec to be rejected');
  return r.errors;
}

// Line numbers are part of the fixture: keep it exactly as is.
const FIXTURE = [
  'seed: 4', //                                     1
  'model:', //                                      2
  '  inputs: 3', //                                 3
  '  layers:', //                                   4
  '    - { units: 0, activation: tanh }', //        5  units at col 16
  '    - { units: 2, activation: sigmoidd }', //    6  activation value at col 31
  '  init: he', //                                  7  value at col 9
  'data:', //                                       8
  '  x:', //                                        9
  '    - [1, 2, 3]', //                            10
  '    - [4, 5]', //                               11  row at col 7
  '    - [7, abc, 9]', //                          12  entry at col 11
  '  y: [[1, 0], [0, 1], [1, 1]]', //              13
  'recipe:', //                                    14
  '  lrr: 0.1', //                                 15  key at col 3
  '  optimizer: adam', //                          16
  '  momentum: 0.9', //                            17  key at col 3
  '  batch: 0', //                                 18  value at col 10
  '  schedule: { kind: step }', //                 19  mapping at col 13
].join('\n');

describe('parseSpec: error paths and positions on a multi-line YAML fixture', () => {
  const list = errors(FIXTURE);
  it.each<[string, string, number, number]>([
    ['model.layers[0].units', 'model.layers[0].units must be a positive integer, got 0', 5, 16],
    ['model.layers[1].activation', "model.layers[1].activation must be one of linear, tanh, sigmoid, relu, leaky-relu, softplus, elu, gelu or a mapping of expr (optionally derivative), got \"sigmoidd\" (did you mean 'sigmoid'?)", 6, 31],
    ['model.init', "model.init must be one of lecun-normal, lecun-uniform, glorot-normal, glorot-uniform, he-normal, he-uniform, orthogonal, got \"he\" (did you mean 'he-normal'?)", 7, 9],
    ['data.x[1]', 'data.x[1] has 2 columns, but model.inputs is 3', 11, 7],
    ['data.x[2][1]', 'data.x[2][1] must be a finite number, got "abc"', 12, 11],
    ['recipe.lrr', "unknown key 'lrr' in recipe (did you mean 'lr'?)", 15, 3],
    ['recipe.momentum', 'recipe.momentum applies to sgd and rmsprop, not to adam; remove it', 17, 3],
    ['recipe.batch', "recipe.batch must be 'full' or a positive integer, got 0", 18, 10],
    ['recipe.schedule', "recipe.schedule is missing the required key 'every'", 19, 3],
  ])('%s', (path, message, line, col) => {
    const hit = list.filter((e) => e.path === path);
    expect(hit).toEqual([{ path, message, line, col }]);
  });

  it('reports all errors, sorted by position', () => {
    expect(list.map((e) => e.path)).toEqual([
      'model.layers[0].units', 'model.layers[1].activation', 'model.init', 'data.x[1]', 'data.x[2][1]',
      'recipe.lrr', 'recipe.momentum', 'recipe.batch', 'recipe.schedule',
    ]);
  });

  it('formats with line and column', () => {
    expect(formatSpecError(list[0])).toBe('model.layers[0].units must be a positive integer, got 0 (line 5, column 16)');
    expect(formatSpecError({ path: '', message: 'the spec is empty' })).toBe('the spec is empty');
  });
});

const NET = (extra = '', y = '[0.5, -0.5]', model = '{ inputs: 2, layers: [{ units: 3, activation: tanh }, { units: 1 }] }') =>
  `model: ${model}\ndata:\n  x: [[0, 1], [1, 0]]\n  y: ${y}\n${extra}`;

describe('parseSpec: cross-field errors', () => {
  it.each<[string, string, string, string, number?]>([
    ['row counts', NET('', '[1, 2, 3]'), 'data.y', 'data.y has 3 rows, but data.x has 2', 4],
    ['target width (mse)', NET('', '[[1, 2], [3, 4]]'), 'data.y[0]', 'data.y rows 0–1 have 2 columns, but the last layer has 1 unit', 4],
    ['mixed target rows', NET('', '[1, [2]]'), 'data.y[1]', 'data.y[1] is a list, but data.y[0] is a number; write every target row the same way', 4],
    ['class index out of range', NET('loss: cross-entropy\n', '[0, 3]', '{ inputs: 2, layers: [{ units: 3 }] }'), 'data.y[1]', 'data.y[1] must be a class index (an integer from 0 to 2), got 3', 4],
    ['class index not an integer', NET('loss: cross-entropy\n', '[[0.5], [1]]', '{ inputs: 2, layers: [{ units: 3 }] }'), 'data.y[0][0]', 'data.y[0][0] must be a class index (an integer from 0 to 2), got 0.5', 4],
    ['cross-entropy with one unit', NET('loss: cross-entropy\n', '[0, 0]'), 'model.layers[1].units', 'cross-entropy needs at least 2 units in the last layer (one logit per class), got 1; use binary-cross-entropy for two classes with one unit', 1],
    ['binary targets outside [0, 1]', NET('loss: binary-cross-entropy\n', '[1, 2]'), 'data.y[1]', 'data.y[1] must be in [0, 1] for binary-cross-entropy, got 2', 4],
    ['no data for a network', 'model: { inputs: 1, layers: [{ units: 1 }] }\n', 'data', 'data is required for a network model: give data.x and data.y, or data.file', 1],
    ['empty data rows', NET().replace('x: [[0, 1], [1, 0]]', 'x: []').replace('[0.5, -0.5]', '[]'), 'data.x', 'data.x must have at least 1 entry, got an empty list', 3],
    ['batch above rows', NET('recipe: { batch: 5 }\n'), 'recipe.batch', 'recipe.batch is 5, but the data has only 2 rows', 5],
    ['recipe.layers length', NET('recipe: { layers: [{ lrScale: 1 }] }\n'), 'recipe.layers', 'recipe.layers has 1 entries, but model.layers has 2; give one { lrScale } per layer', 5],
    ['nesterov without momentum', NET('recipe: { nesterov: true }\n'), 'recipe.nesterov', 'recipe.nesterov needs recipe.momentum > 0 (Nesterov momentum with zero momentum is undefined, as in PyTorch)', 5],
    ['nesterov on adam', NET('recipe: { optimizer: adam, nesterov: true }\n'), 'recipe.nesterov', 'recipe.nesterov applies to sgd, not to adam; remove it', 5],
    ['non-finite number', NET('recipe: { lr: .inf }\n'), 'recipe.lr', 'recipe.lr must be a finite number, got Infinity', 5],
    ['NaN in data', NET().replace('[1, 0]]', '[.nan, 0]]'), 'data.x[1][0]', 'data.x[1][0] must be a finite number, got NaN', 3],
    ['type error', NET('recipe: { lr: abc }\n'), 'recipe.lr', 'recipe.lr must be a positive number, got "abc"', 5],
    ['integer expected', NET('recipe: { warmup: 2.5 }\n'), 'recipe.warmup', 'recipe.warmup must be a non-negative integer, got 2.5', 5],
    ['range', NET('recipe: { optimizer: adam, beta2: 1 }\n'), 'recipe.beta2', 'recipe.beta2 must be a number in [0, 1), got 1', 5],
    ['unknown top-level key', NET('sed: 1\n'), 'sed', "unknown key 'sed' at the top level (did you mean 'seed'?)", 5],
    ['unknown key without a near match', NET('recipe: { zzzzzz: 1 }\n'), 'recipe.zzzzzz', expect.stringContaining("unknown key 'zzzzzz' in recipe (allowed: optimizer, lr,") as unknown as string, 5],
    ['unknown schedule kind', NET('recipe: { schedule: { kind: cosin, steps: 4 } }\n'), 'recipe.schedule.kind', "recipe.schedule.kind must be one of constant, step, multistep, factor, exponential, inverse-time, polynomial, cosine, restarts, onecycle, plateau, sequence, got \"cosin\" (did you mean 'cosine'?)", 5],
    ['weights count', NET('', undefined, '{ inputs: 2, layers: [{ units: 1 }, { units: 1 }], weights: [{ weight: [[1, 2]], bias: [0] }] }'), 'model.weights', 'model.weights has 1 entries, but model.layers has 2; give one { weight, bias } per layer', 1],
    ['weights rows', NET('', undefined, '{ inputs: 2, layers: [{ units: 1 }], weights: [{ weight: [[1, 2], [3, 4]], bias: [0] }] }'), 'model.weights[0].weight', 'model.weights[0].weight has 2 rows, but model.layers[0].units is 1 (weight is [units][fan_in])', 1],
    ['weights fan-in', NET('', undefined, '{ inputs: 2, layers: [{ units: 1 }], weights: [{ weight: [[1, 2, 3]], bias: [0] }] }'), 'model.weights[0].weight[0]', "model.weights[0].weight[0] has 3 columns, but the layer's fan-in is 2", 1],
    ['bias length', NET('', undefined, '{ inputs: 2, layers: [{ units: 1 }], weights: [{ weight: [[1, 2]], bias: [0, 1] }] }'), 'model.weights[0].bias', 'model.weights[0].bias has 2 entries, but model.layers[0].units is 1', 1],
    ['missing units', NET('', undefined, '{ inputs: 2, layers: [{ activation: tanh }] }'), 'model.layers[0]', "model.layers[0] is missing the required key 'units'", 1],
    ['non-square matrix', 'model: { objective: quadratic, matrix: [[1, 0], [0]] }\n', 'model.matrix[1]', 'model.matrix[1] has 1 columns, but the matrix has 2 rows; it must be square', 1],
    ['asymmetric matrix', 'model: { objective: quadratic, matrix: [[1, 2], [3, 1]] }\n', 'model.matrix[0][1]', 'model.matrix must be symmetric: [0][1] is 2 but [1][0] is 3', 1],
    ['start length', 'model: { objective: quadratic, matrix: [[1, 0], [0, 1]], start: [1] }\n', 'model.start', 'model.start has 1 entries, but the quadratic objective has 2 parameters', 1],
    ['rosenbrock start length', 'model: { objective: rosenbrock, start: [1, 2, 3] }\n', 'model.start', 'model.start has 3 entries, but the rosenbrock objective has 2 parameters', 1],
    ['network keys on an objective', 'model: { objective: rosenbrock, inputs: 2 }\n', 'model.inputs', "unknown key 'inputs' in model (allowed: objective, start)", 1],
    ['layers on an objective', 'model: { objective: rosenbrock }\nrecipe: { layers: [{ lrScale: 1 }] }\n', 'recipe.layers', 'recipe.layers sets per-layer rates of a network, but the rosenbrock objective has no layers', 2],
    ['negative seed', NET('seed: -1\n'), 'seed', 'seed must be a non-negative integer, got -1', 5],
  ])('%s', (_name, text, path, message, line) => {
    const hit = errors(text).filter((e) => e.path === path);
    expect(hit).toHaveLength(1);
    expect(hit[0].message).toEqual(message);
    if (line !== undefined) expect(hit[0].line).toBe(line);
  });
});

describe('parseSpec: text-level problems', () => {
  it.each<[string, string, RegExp, number | undefined]>([
    ['empty text', '', /the spec is empty/, undefined],
    ['only a comment', '# nothing\n', /the spec is empty/, undefined],
    ['not a mapping', '- 1\n- 2\n', /the spec must be a mapping of keys/, 1],
    ['duplicate keys', 'seed: 1\nseed: 2\n', /Map keys must be unique/, 2],
    ['bad YAML', 'model:\n  inputs: [1, 2\nrecipe: {}\n', /Flow sequence|end with a \]/, 3],
    ['bad JSON (strict)', '{\n  "seed": 1,\n}', /invalid JSON/, 3],
    ['truncated JSON', '{"model": ', /invalid JSON/, 1],
  ])('%s', (name, text, pattern, line) => {
    const list = errors(text, name.includes('JSON') ? 'json' : 'auto');
    expect(list[0].message).toMatch(pattern);
    expect(list[0].line).toBe(line);
  });

  it('never throws, whatever the input', () => {
    for (const t of ['{', ']', ': :', '\t', '&a [*a]', 'model: !!binary xyz', '--- \n--- \n', 'a: *x']) expect(() => parseSpec(t)).not.toThrow();
    expect(() => parseSpec(42 as unknown as string)).not.toThrow();
  });
});

describe('parseSpec: JSON input gives line and column too', () => {
  const json = `{
  "model": {
    "inputs": 2,
    "layers": [{ "units": 1, "activation": "tahn" }]
  },
  "data": { "x": [[1, 2]], "y": [3] },
  "recipe": { "lr": -1, "optimiser": "sgd" }
}`;
  it.each<[string, number, number]>([
    ['model.layers[0].activation', 4, 44],
    ['recipe.lr', 7, 21],
    ['recipe.optimiser', 7, 25],
  ])('%s at %d:%d', (path, line, col) => {
    for (const format of ['json', 'auto'] as const) {
      const hit = errors(json, format).find((e) => e.path === path);
      expect(hit).toMatchObject({ line, col });
    }
  });
  it('a valid JSON spec parses to the same experiment as its YAML twin', () => {
    const a = parseSpec('{"seed": 5, "model": {"objective": "quadratic", "matrix": [[3]]}, "recipe": {"lr": 0.2}}', 'json');
    const b = parseSpec('seed: 5\nmodel: { objective: quadratic, matrix: [[3]] }\nrecipe: { lr: 0.2 }\n');
    expect(a.ok && b.ok).toBe(true);
    if (a.ok && b.ok) expect(a.experiment).toEqual(b.experiment);
  });
});

describe('parseSpec: damaged templates never throw', () => {
  // A fixed linear congruential sequence picks the damage, so failures reproduce.
  let seed = 12345;
  const next = (n: number) => {
    seed = (Math.imul(seed, 1103515245) + 12345) >>> 0;
    return seed % n;
  };
  const junk = ['', ' ', ':', '-', '[', ']', '{', '}', '#', '0', 'x', '\n', '"', '&a', '*a', '\t'];
  it('400 random single-character edits give a result with well-placed errors', async () => {
    const { TEMPLATE_SPEC } = await import('../../../src/experiment');
    const lines = TEMPLATE_SPEC.split('\n').length;
    for (let k = 0; k < 400; k++) {
      const at = next(TEMPLATE_SPEC.length);
      const text = TEMPLATE_SPEC.slice(0, at) + junk[next(junk.length)] + TEMPLATE_SPEC.slice(at + 1);
      const r = parseSpec(text);
      if (r.ok) continue;
      expect(r.errors.length).toBeGreaterThan(0);
      for (const e of r.errors) {
        expect(e.message.length).toBeGreaterThan(5);
        if (e.line !== undefined) expect(e.line).toBeLessThanOrEqual(lines + 1);
      }
    }
  });
});

describe('momentum on rmsprop', () => {
  it('is accepted (torch.optim.RMSprop has a momentum buffer)', () => {
    const r = parseSpec('seed: 1\nmodel: { objective: rosenbrock }\nrecipe: { optimizer: rmsprop, lr: 0.01, momentum: 0.9 }\n');
    expect(r.ok).toBe(true);
    if (r.ok) expect(r.experiment.recipe.momentum).toBe(0.9);
  });
});

describe('optimizer-dependent lr default', () => {
  it.each([['sgd', 0.01], ['adam', 0.01], ['lbfgs', 1], ['cg', 1], ['newton', 1]] as const)('%s defaults to lr %p', (optimizer, lr) => {
    // source: PyTorch 1.13 defaults (SGD has none; torch.optim.LBFGS lr=1); Nocedal & Wright 2006 §3.5 (unit initial step for quasi-Newton/Newton)
    const r = parseSpec(`seed: 1\nmodel: { objective: rosenbrock }\nrecipe: { optimizer: ${optimizer} }\n`);
    expect(r.ok && r.experiment.recipe.lr).toBe(lr);
  });
});

describe('momentum keys on optimizers that ignore them', () => {
  it('an explicit momentum: 0 on adam is only a warning', () => {
    const r = parseSpec('seed: 1\nmodel: { objective: rosenbrock }\nrecipe: { optimizer: adam, momentum: 0, nesterov: false }\n');
    expect(r.ok).toBe(true);
    if (r.ok) expect(r.warnings.map((w) => w.path)).toEqual(['recipe.momentum', 'recipe.nesterov']);
  });
  it('a non-zero momentum on adam is an error', () => {
    const r = parseSpec('seed: 1\nmodel: { objective: rosenbrock }\nrecipe: { optimizer: adam, momentum: 0.9 }\n');
    expect(r.ok).toBe(false);
  });
});

describe('rows that share one problem', () => {
  it('are reported once, with their row ranges, at the first such row', () => {
    const x = Array.from({ length: 50 }, (_, i) => `[${i}, 1]`).join(', ');
    const y = Array.from({ length: 50 }, () => '0').join(', ');
    const list = errors(`model: { inputs: 3, layers: [{ units: 1 }] }\ndata: { x: [${x}], y: [${y}] }\n`);
    const wide = list.filter((e) => e.path.startsWith('data.x'));
    expect(wide).toHaveLength(1);
    expect(wide[0]).toMatchObject({ path: 'data.x[0]', message: 'data.x rows 0–49 have 2 columns, but model.inputs is 3', line: 2 });
  });

  it('shortens scattered rows to a few ranges and a count', () => {
    expect(rowRanges([0, 1, 2, 5, 7, 8, 10, 12, 13, 14, 20])).toBe('0–2, 5, 7–8, 10 and 4 more') // 12, 13, 14 and 20 are left;
    expect(rowRanges([4])).toBe('4');
  });
});

describe('hostile sizes and shapes', () => {
  it('reports at most MAX_PROBLEMS problems and counts the rest', () => {
    const keys = Array.from({ length: 20_000 }, (_, i) => `  k${i}: 1`).join('\n');
    const list = errors(`model: { inputs: 1, layers: [{ units: 1 }] }\ndata: { x: [[1]], y: [[1]] }\nrecipe:\n${keys}\n`);
    expect(list).toHaveLength(MAX_PROBLEMS + 1);
    expect(list[0]).toMatchObject({ path: 'recipe.k0', line: 4, col: 3 });
    expect(list[MAX_PROBLEMS].message).toBe(`… and ${20_000 - MAX_PROBLEMS} more problems after these (fix the first ones; many share one cause)`);
  });

  it.each([
    ['a 10 000-deep flow list', `model: ${'['.repeat(10_000)}${']'.repeat(10_000)}`, 1],
    ['a 100 000-deep JSON value', `{"model": ${'['.repeat(100_000)}${']'.repeat(100_000)}}`, 1],
    ['a 200-deep block mapping', Array.from({ length: 200 }, (_, i) => `${' '.repeat(i)}k${i}:`).join('\n') + ' 1', 65]
  ])('refuses %s with one message at its line, before parsing', (_name, text, line) => {
    const list = errors(text);
    expect(list).toHaveLength(1);
    expect(list[0].message).toMatch(/nests .* more than 64 levels deep/);
    expect(list[0].line).toBe(line);
  });

  it('still finds duplicate keys (now in linear time) with their position', () => {
    const list = errors('seed: 1\nseed: 2\nmodel: { objective: rosenbrock }\n');
    expect(list).toHaveLength(1);
    expect(list[0]).toMatchObject({ line: 2, col: 1 });
    expect(list[0].message).toMatch(/'seed' appears more than once/);
  });
});

describe('size limits, checked before allocation', () => {
  const net = (units: number, rows = 1) => `model: { inputs: 2, layers: [{ units: ${units} }, { units: 1 }] }\ndata: { x: [${Array.from({ length: rows }, () => '[1, 2]').join(', ')}], y: [${Array.from({ length: rows }, () => '[1]').join(', ')}] }\n`;

  it('names the layer, the parameter count and the limit for an absurd layer', () => {
    const list = errors(net(1e9));
    expect(list).toHaveLength(1);
    expect(list[0]).toMatchObject({ path: 'model.layers[0].units', line: 1 });
    // (2 + 1)·1e9 + (1e9 + 1)·1 parameters
    expect(list[0].message).toBe('the network would have 4 000 000 001 parameters (model.layers[0].units is 1 000 000 000), above the limit of 2 000 000 (limit maxParameters)');
  });

  it('applies the limits it is given', () => {
    const tight = { ...DEFAULT_SPEC_LIMITS, maxParameters: 10, maxRows: 3, maxActivations: 1000, maxSpecChars: 10_000 };
    const r = parseSpec(net(3), 'auto', { limits: tight }); // (2 + 1)·3 + (3 + 1)·1 = 13 parameters
    expect(r.ok ? '' : r.errors[0].message).toMatch(/13 parameters .* above the limit of 10/);
    const rows = parseSpec(net(2, 4), 'auto', { limits: tight });
    expect(rows.ok ? '' : rows.errors[0].message).toBe('data.x has 4 rows, above the limit of 3 (limit maxRows)');
    const acts = parseSpec(net(2, 400), 'auto', { limits: { ...tight, maxRows: 1000 } }); // 400 rows × 3 units
    expect(acts.ok ? '' : acts.errors[0].message).toMatch(/^400 rows through layers of 3 units in all need 1 200 activations/);
    const long = parseSpec(net(2, 2) + '#'.repeat(20_000), 'auto', { limits: tight });
    expect(long.ok ? '' : long.errors[0].message).toMatch(/^the spec is 20 \d{3} characters long, above the limit of 10 000/);
    expect(parseSpec(net(2), 'auto', { limits: tight }).ok).toBe(true);
  });

  it('refuses Newton methods above their dense limit at parse time, not at the first step', () => {
    const list = errors('model: { inputs: 10, layers: [{ units: 200 }, { units: 1 }] }\ndata: { x: [[1,2,3,4,5,6,7,8,9,10]], y: [[1]] }\nrecipe: { optimizer: gauss-newton }\n');
    // (10 + 1)·200 + (200 + 1)·1 = 2 401 parameters
    expect(list).toHaveLength(1);
    expect(list[0]).toMatchObject({ path: 'recipe.optimizer', line: 3 });
    expect(list[0].message).toMatch(/dense 2 401 × 2 401 curvature matrix; it allows at most 2 000 parameters/);
  });

  it('reads limit overrides and refuses bad ones', () => {
    expect(parseLimits(['maxParameters=5', 'maxRows=7'])).toEqual({ ok: true, limits: { ...DEFAULT_SPEC_LIMITS, maxParameters: 5, maxRows: 7 } });
    const bad = parseLimits(['maxParameters=0', 'speed=3', 'maxRows=1e3']);
    expect(bad.ok ? [] : bad.errors).toHaveLength(3);
  });
});
