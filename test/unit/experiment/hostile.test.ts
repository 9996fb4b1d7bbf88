/**
 * Hostile specs: a generated corpus of specs a careless or hostile user could write. Each must be
 * refused with clear messages — never an exception, never a message without a place to look — and
 * fast. "Clear" is checked mechanically: every problem names a path (or is a syntax/limit problem
 * with a line), value problems carry a line and column, messages stay short (a payload is never
 * echoed whole), and the expected field is among the paths.
 */
import { DEFAULT_SPEC_LIMITS, MAX_PROBLEMS, parseSpec } from '../../../src/experiment';
import type { SpecError } from '../../../src/experiment';

/** A spec that parses, written out so each case can break one part of it. */
function base(over: { model?: string; data?: string; recipe?: string; loss?: string; extra?: string } = {}): string {
  return [
    'seed: 3',
    `model: ${over.model ?? '{ inputs: 2, layers: [{ units: 4, activation: tanh }, { units: 1 }] }'}`,
    `data: ${over.data ?? '{ x: [[0.1, 0.2], [0.3, -0.4], [0.5, 0.6]], y: [[1], [0], [1]] }'}`,
    ...(over.loss !== undefined ? [`loss: ${over.loss}`] : []),
    `recipe: ${over.recipe ?? '{ optimizer: sgd, lr: 0.1 }'}`,
    ...(over.extra !== undefined ? [over.extra] : [])
  ].join('\n') + '\n';
}

interface Case {
  name: string;
  text: string;
  /** A path (prefix) that must be among the problems' paths; '' for text-level problems. */
  at: string;
  /** Limits to parse with (default: the defaults). */
  limits?: typeof DEFAULT_SPEC_LIMITS;
}

const BAD_VALUES: [string, string][] = [
  ['a string', '"fast"'],
  ['a negative number', '-1'],
  ['NaN', '.nan'],
  ['infinity', '.inf'],
  ['a list', '[1, 2]'],
  ['a mapping', '{ a: 1 }'],
  ['nothing', 'null']
];

const RECIPE_KEYS = ['lr', 'momentum', 'beta1', 'beta2', 'eps', 'alpha', 'weightDecay', 'warmup', 'clipNorm', 'clipValue', 'history', 'damping', 'innerSteps', 'dampening', 'lrDecay', 'initialAccumulator', 'maxIter', 'maxEval', 'toleranceGrad', 'toleranceChange'];

const cases: Case[] = [];
// every numeric recipe key with every kind of wrong value (some "wrong" values are legal for some
// keys — a negative momentum is not, but nothing is legal as a list, a mapping, NaN or text)
for (const key of RECIPE_KEYS) {
  for (const [what, value] of BAD_VALUES) {
    if (what === 'a negative number' && ['warmup'].includes(key)) continue;
    cases.push({ name: `recipe.${key} as ${what}`, text: base({ recipe: `{ optimizer: sgd, ${key}: ${value} }` }), at: `recipe.${key}` });
  }
}
for (const [what, value] of [['an unknown optimizer', 'sgdd'], ['a number', '3'], ['a list', '[sgd]']]) {
  cases.push({ name: `recipe.optimizer as ${what}`, text: base({ recipe: `{ optimizer: ${value} }` }), at: 'recipe.optimizer' });
}
for (const [what, value] of [['zero', '0'], ['a fraction', '0.5'], ['larger than the rows', '99'], ['text', 'half']]) {
  cases.push({ name: `recipe.batch as ${what}`, text: base({ recipe: `{ optimizer: sgd, batch: ${value} }` }), at: 'recipe.batch' });
}
for (const [what, value] of [['an unknown kind', '{ kind: zigzag }'], ['a cosine without steps', '{ kind: cosine }'], ['a step schedule with every 0', '{ kind: step, every: 0 }'], ['a list', '[cosine]']]) {
  cases.push({ name: `recipe.schedule as ${what}`, text: base({ recipe: `{ optimizer: sgd, schedule: ${value} }` }), at: 'recipe.schedule' });
}
// model
for (const [what, value] of [['zero', '0'], ['negative', '-3'], ['a fraction', '1.5'], ['text', '"8"'], ['nothing', 'null'], ['huge', '1e9']]) {
  cases.push({ name: `model.layers[0].units ${what}`, text: base({ model: `{ inputs: 2, layers: [{ units: ${value} }, { units: 1 }] }` }), at: 'model.layers[0].units' });
}
for (const [what, value] of [['zero', '0'], ['text', 'two'], ['a list', '[2]']]) {
  cases.push({ name: `model.inputs ${what}`, text: base({ model: `{ inputs: ${value}, layers: [{ units: 1 }] }` }), at: 'model.inputs' });
}
cases.push(
  { name: 'no layers', text: base({ model: '{ inputs: 2, layers: [] }' }), at: 'model.layers' },
  { name: 'an unknown activation', text: base({ model: '{ inputs: 2, layers: [{ units: 4, activation: swish }, { units: 1 }] }' }), at: 'model.layers[0].activation' },
  { name: 'an unknown init', text: base({ model: '{ inputs: 2, init: random, layers: [{ units: 1 }] }' }), at: 'model.init' },
  { name: 'a zero gain', text: base({ model: '{ inputs: 2, gain: 0, layers: [{ units: 1 }] }' }), at: 'model.gain' },
  { name: 'an infinite gain', text: base({ model: '{ inputs: 2, gain: .inf, layers: [{ units: 1 }] }' }), at: 'model.gain' },
  { name: 'an unknown objective', text: 'model: { objective: himmelblau }\n', at: 'model.objective' },
  { name: 'a non-square quadratic', text: 'model: { objective: quadratic, matrix: [[1, 2]] }\n', at: 'model.matrix' },
  { name: 'an asymmetric quadratic', text: 'model: { objective: quadratic, matrix: [[1, 2], [3, 1]] }\n', at: 'model.matrix' },
  { name: 'explicit weights of the wrong shape', text: base({ model: '{ inputs: 2, layers: [{ units: 1 }], weights: [{ weight: [[1, 2, 3]], bias: [0] }] }' }), at: 'model.weights[0].weight' },
  { name: 'a Newton method above its dense limit', text: base({ model: '{ inputs: 2, layers: [{ units: 700 }, { units: 1 }] }', recipe: '{ optimizer: newton }' }), at: 'recipe.optimizer' }
);
// data
cases.push(
  { name: 'a row with a missing column', text: base({ data: '{ x: [[0.1, 0.2], [0.3]], y: [[1], [0]] }' }), at: 'data.x[1]' },
  { name: 'text in x', text: base({ data: '{ x: [[0.1, "a"], [0.3, 0.4]], y: [[1], [0]] }' }), at: 'data.x[0][1]' },
  { name: 'NaN in x', text: base({ data: '{ x: [[0.1, .nan], [0.3, 0.4]], y: [[1], [0]] }' }), at: 'data.x[0][1]' },
  { name: 'infinity in y', text: base({ data: '{ x: [[0.1, 0.2], [0.3, 0.4]], y: [[.inf], [0]] }' }), at: 'data.y[0]' },
  { name: 'y with too many columns', text: base({ data: '{ x: [[0.1, 0.2], [0.3, 0.4]], y: [[1, 2], [0, 1]] }' }), at: 'data.y' },
  { name: 'fewer targets than rows', text: base({ data: '{ x: [[0.1, 0.2], [0.3, 0.4]], y: [[1]] }' }), at: 'data.y' },
  { name: 'a class index out of range', text: base({ loss: 'cross-entropy', model: '{ inputs: 2, layers: [{ units: 3 }] }', data: '{ x: [[0.1, 0.2], [0.3, 0.4]], y: [0, 7] }' }), at: 'data.y[1]' },
  { name: 'a fractional class index', text: base({ loss: 'cross-entropy', model: '{ inputs: 2, layers: [{ units: 3 }] }', data: '{ x: [[0.1, 0.2], [0.3, 0.4]], y: [0, 1.5] }' }), at: 'data.y[1]' },
  { name: 'a binary target outside [0, 1]', text: base({ loss: 'binary-cross-entropy', data: '{ x: [[0.1, 0.2], [0.3, 0.4]], y: [[1], [2]] }' }), at: 'data.y[1]' },
  { name: 'held-out rows of the wrong width', text: base({ data: '{ x: [[0.1, 0.2], [0.3, 0.4]], y: [[1], [0]], heldOut: { x: [[1, 2, 3]], y: [[1]] } }' }), at: 'data.heldOut.x[0]' },
  { name: 'empty x', text: base({ data: '{ x: [], y: [] }' }), at: 'data.x' },
  { name: 'no data for a network', text: 'model: { inputs: 2, layers: [{ units: 1 }] }\n', at: 'data' },
  { name: 'an absolute data file path', text: base({ data: '{ file: /etc/passwd }' }), at: 'data.file' },
  { name: 'a URL as data file', text: base({ data: '{ file: "https://example.invalid/x.csv" }' }), at: 'data.file' },
  { name: 'a data file nobody read', text: base({ data: '{ file: rows.csv }' }), at: 'data.file' },
  { name: 'an unknown data key', text: base({ data: '{ x: [[0.1, 0.2]], y: [[1]], shuffle: true }' }), at: 'data.shuffle' },
  { name: 'an unknown loss', text: base({ loss: 'hinge' }), at: 'loss' },
  { name: 'a negative l2', text: base({ extra: 'regularization: { l2: -0.1 }' }), at: 'regularization.l2' },
  { name: 'a negative seed', text: base().replace('seed: 3', 'seed: -3'), at: 'seed' },
  { name: 'a fractional seed', text: base().replace('seed: 3', 'seed: 3.5'), at: 'seed' },
  { name: 'a huge seed', text: base().replace('seed: 3', 'seed: 1e300'), at: 'seed' },
  { name: 'an unknown top-level key', text: base({ extra: 'optimiser: adam' }), at: 'optimiser' },
  { name: 'a prototype key', text: base({ extra: '__proto__: { polluted: true }' }), at: '__proto__' },
  { name: 'a constructor key in the recipe', text: base({ recipe: '{ optimizer: sgd, constructor: 1 }' }), at: 'recipe.constructor' }
);
// text-level problems: syntax, sizes, nesting, aliases
const bomb = ['a: &a [x, x, x, x, x, x, x, x, x]', ...Array.from({ length: 8 }, (_, i) => `${String.fromCharCode(98 + i)}: &${String.fromCharCode(98 + i)} [*${String.fromCharCode(97 + i)}, *${String.fromCharCode(97 + i)}, *${String.fromCharCode(97 + i)}, *${String.fromCharCode(97 + i)}, *${String.fromCharCode(97 + i)}, *${String.fromCharCode(97 + i)}, *${String.fromCharCode(97 + i)}, *${String.fromCharCode(97 + i)}, *${String.fromCharCode(97 + i)}]`)].join('\n');
cases.push(
  { name: 'an unclosed bracket', text: 'model: { inputs: 2, layers: [{ units: 1 }\n', at: '' },
  { name: 'a tab indentation', text: 'model:\n\tinputs: 2\n', at: '' },
  { name: 'a duplicate key', text: 'seed: 1\nseed: 2\nmodel: { objective: rosenbrock }\n', at: '' },
  { name: 'a YAML alias bomb', text: bomb, at: '' },
  { name: 'binary garbage', text: String.fromCharCode(...Array.from({ length: 4096 }, (_, i) => (i * 37 + 11) % 256)), at: '' },
  { name: 'NUL characters', text: 'seed: 1\u0000\u0000\nmodel: { objective: rosenbrock }\n', at: '' },
  { name: 'a list at the top', text: '- model\n- data\n', at: '' },
  { name: 'a number at the top', text: '42\n', at: '' },
  { name: 'an empty spec', text: '   \n# nothing\n', at: '' },
  { name: 'a 10 000-deep list', text: `model: ${'['.repeat(10_000)}${']'.repeat(10_000)}\n`, at: '' },
  { name: 'a 100 000-deep JSON value', text: `{"model": ${'['.repeat(100_000)}${']'.repeat(100_000)}}`, at: '' },
  { name: 'a 100-deep block mapping', text: Array.from({ length: 100 }, (_, i) => `${' '.repeat(i)}k${i}:`).join('\n') + ' 1\n', at: '' },
  { name: '20 000 unknown keys', text: base({ extra: 'junk:\n' + Array.from({ length: 20_000 }, (_, i) => `  k${i}: 1`).join('\n') }), at: 'junk' },
  { name: 'a spec over the text limit', text: base() + `# ${'x'.repeat(200)}\n`, at: '', limits: { ...DEFAULT_SPEC_LIMITS, maxSpecChars: 200 } },
  { name: 'rows over the row limit', text: base(), at: 'data.x', limits: { ...DEFAULT_SPEC_LIMITS, maxRows: 2 } },
  { name: 'parameters over the limit', text: base(), at: 'model.layers', limits: { ...DEFAULT_SPEC_LIMITS, maxParameters: 10 } },
  { name: 'activations over the limit', text: base(), at: 'data.x', limits: { ...DEFAULT_SPEC_LIMITS, maxActivations: 5 } },
  { name: 'a 1e9-unit layer', text: base({ model: '{ inputs: 2, layers: [{ units: 1000000000 }, { units: 1 }] }' }), at: 'model.layers[0].units' },
  { name: 'a markup payload as a key', text: base({ extra: '"<img src=x onerror=alert(1)>": 1' }), at: '<img src=x onerror=alert(1)>' },
  { name: 'a markup payload as an optimizer', text: base({ recipe: '{ optimizer: "<script>alert(1)</script>" }' }), at: 'recipe.optimizer' }
);

describe('hostile specs', () => {
  // The README's reliability table quotes this line.
  afterAll(() => console.log(`hostile-spec corpus: ${cases.length} specs`));

  it('number at least 150', () => {
    expect(cases.length).toBeGreaterThanOrEqual(150);
  });

  it.each(cases.map((c) => [c.name, c] as const))('%s: refused with clear, placed, short messages', (_name, c) => {
    let r: ReturnType<typeof parseSpec> | undefined;
    const t0 = Date.now();
    expect(() => (r = parseSpec(c.text, 'auto', c.limits ? { limits: c.limits } : {}))).not.toThrow();
    const ms = Date.now() - t0;
    expect(r?.ok).toBe(false);
    const errors: SpecError[] = r !== undefined && !r.ok ? r.errors : [];
    expect(errors.length).toBeGreaterThan(0);
    expect(errors.length).toBeLessThanOrEqual(MAX_PROBLEMS + 1);
    for (const e of errors) {
      expect(typeof e.message).toBe('string');
      expect(e.message.length).toBeGreaterThan(10);
      expect(e.message.length).toBeLessThan(600); // a payload is never echoed whole
      // a problem with no path is about the text itself: it needs a line, unless it is a size limit or an empty spec
      if (e.path === '' && !/limit|empty|more problem|must be a mapping/.test(e.message)) expect(e.line).toBeGreaterThan(0);
    }
    if (c.at !== '') {
      const hit = errors.find((e) => e.path === c.at || e.path.startsWith(`${c.at}.`) || e.path.startsWith(`${c.at}[`));
      expect({ name: c.name, paths: errors.map((e) => e.path), found: hit !== undefined }).toMatchObject({ found: true });
      // value problems point into the text, so the user can find them
      if (hit && !c.limits) expect(hit.line).toBeGreaterThan(0);
    }
    // a refusal is quick: linear work at most (generous for a loaded 2-core machine)
    expect(ms).toBeLessThan(15_000);
  });
});
