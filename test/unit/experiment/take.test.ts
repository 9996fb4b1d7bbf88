/**
 * Taking data from the kernel, without a kernel: replies are built as the Python expression's
 * answer would be (base64 of JSON in a str repr); the expression itself runs against a real
 * kernel in the browser test of the real server.
 */
import { parseSpec } from '../../../src/experiment';
import {
  arrayExpression,
  checkName,
  checkTakenSet,
  readArrayReply,
  takenHash,
  takenSpecText,
  type ExpressionReply,
  type TakenArray,
  type TakeRole
} from '../../../src/experiment/take';

/** The reply of the kernel for a JSON body, as IPython's text/plain repr of the base64 string. */
const ok = (body: unknown): ExpressionReply => ({
  status: 'ok',
  data: { 'text/plain': `'${Buffer.from(JSON.stringify(body)).toString('base64')}'` }
});
const err = (ename: string, evalue: string): ExpressionReply => ({ status: 'error', ename, evalue });

const taken = (role: TakeRole, name: string, shape: number[], values: number[]): TakenArray => ({
  role,
  name,
  shape,
  dtype: 'float64',
  values: Float64Array.from(values)
});

describe('names and the kernel expression', () => {
  it.each([
    ['X_train', true],
    ['data.features', true],
    ['x1', true],
    ['1x', false],
    ['X[0]', false],
    ['os.system("rm")', false],
    ['', false]
  ])('%j is a name: %s', (name, good) => {
    expect(checkName('x', name) === null).toBe(good);
  });

  it('puts the name and the limit into the expression and refuses anything else', () => {
    const e = arrayExpression('X_train', 5000);
    expect(e).toContain('np.asarray(X_train)');
    expect(e).toContain(', 5000)');
    expect(() => arrayExpression('X; import os', 10)).toThrow(/not a Python variable name/);
    expect(() => arrayExpression('X', 0)).toThrow(/positive integer/);
  });
});

describe('reading replies', () => {
  const LIMIT = 100;
  it('reads a 2-D float array', () => {
    const r = readArrayReply('x', 'X', ok({ shape: [2, 2], dtype: 'float32', values: [0.5, -1.25, 3, 1e-300] }), LIMIT);
    expect(r).toEqual({ role: 'x', name: 'X', shape: [2, 2], dtype: 'float32', values: Float64Array.from([0.5, -1.25, 3, 1e-300]) });
  });

  it.each<[string, ExpressionReply | undefined, RegExp]>([
    ['missing name', err('NameError', "name 'X' is not defined"), /^x ← X: no variable named X in the kernel \(run the cell that defines it first\)$/],
    ['ragged rows', err('ValueError', 'setting an array element with a sequence. The requested array has an inhomogeneous shape after 1 dimensions.'), /ragged: its rows do not all have the same length/],
    ['no numpy', err('ModuleNotFoundError', "No module named 'numpy'"), /NumPy is not installed in the kernel/],
    ['strings', ok({ error: 'dtype', shape: [3], dtype: '<U5' }), /holds <U5 values, not numbers/],
    ['objects', ok({ error: 'dtype', shape: [2], dtype: 'object' }), /Python objects, not numbers/],
    ['complex', ok({ error: 'dtype', shape: [2], dtype: 'complex128' }), /complex numbers/],
    ['too large', ok({ error: 'size', shape: [1000, 3], dtype: 'float64', size: 3000 }), /1000 × 3 = 3000 numbers, above the limit of 100 .*take a sample of rows/],
    ['NaN', ok({ error: 'nonfinite', shape: [4], dtype: 'float64', count: 2, first: 1 }), /2 of its values are NaN or ±∞ \(the first at flat index 1\)/],
    ['3-D', ok({ shape: [1, 1, 2], dtype: 'float64', values: [1, 2] }), /has 3 dimensions \(1 × 1 × 2\)/],
    ['scalar', ok({ shape: [], dtype: 'float64', values: [1] }), /single number/],
    ['count mismatch', ok({ shape: [3], dtype: 'float64', values: [1, 2] }), /does not match its shape/],
    ['not Python', { status: 'ok', data: { 'text/plain': '42' } }, /unexpected form/],
    ['no answer', undefined, /sent no answer/]
  ])('%s', (_what, reply, message) => {
    const r = readArrayReply('x', 'X', reply, LIMIT);
    expect('message' in r).toBe(true);
    if ('message' in r) expect(r.message).toMatch(message);
  });
});

describe('a set of taken arrays', () => {
  it('needs x and y with matching rows and held-out widths', () => {
    expect(checkTakenSet([taken('x', 'X', [3, 2], [1, 2, 3, 4, 5, 6])])).toEqual(['y is required']);
    expect(checkTakenSet([taken('x', 'X', [3, 2], [1, 2, 3, 4, 5, 6]), taken('y', 'y', [2], [1, 2])])).toEqual([
      'x has 3 rows but y has 2: they must match'
    ]);
    expect(
      checkTakenSet([
        taken('x', 'X', [1, 2], [1, 2]),
        taken('y', 'y', [1], [1]),
        taken('heldOut.x', 'Xh', [1, 3], [1, 2, 3]),
        taken('heldOut.y', 'yh', [1], [1])
      ])
    ).toEqual(['heldOut.x has 3 columns but x has 2: they must match']);
    expect(checkTakenSet([taken('x', 'X', [1, 1], [1]), taken('y', 'y', [1], [1]), taken('heldOut.x', 'Xh', [1, 1], [1])])).toEqual([
      'heldOut.x and heldOut.y go together: give both or neither'
    ]);
  });
});

describe('content hash', () => {
  it('is SHA-256 of the little-endian float64 values, arrays concatenated', () => {
    // source: Python 3.11 hashlib + NumPy 2.4.6:
    // hashlib.sha256(b"".join(np.asarray(a, "<f8").tobytes() for a in (x, y))).hexdigest()
    // with x = [[0.5, -1.25], [3.0, 1e-300]], y = [2.0, -0.0]
    expect(takenHash([Float64Array.from([0.5, -1.25, 3, 1e-300]), Float64Array.from([2, -0])])).toBe(
      'ce0d94b548f6d31c3f1725559644e69a2b826498b048344faf573485015eb867'
    );
    // source: Python 3.11 hashlib.sha256(np.asarray([1.0], "<f8").tobytes()).hexdigest()
    expect(takenHash([Float64Array.from([1])])).toBe('6c3c396ed6b5c36dcae172271f462051b1266b851e92df3deea8ac65478fd712');
  });
});

describe('the spec of a new cell', () => {
  const x = taken('x', 'X_train', [3, 2], [0.5, -1.25, 3, 1e-300, -0, 0.1 + 0.2]);
  const y = taken('y', 'y_train', [3], [2, -0.5, 7]);
  const text = takenSpecText([y, x], '2026-12-03');

  it('parses into a net sized to the data, with every value exact and no warning', () => {
    expect(text.split('\n')[0]).toBe('%%stepwell');
    expect(text).toContain('x ← X_train (3 × 2, float64)');
    const r = parseSpec(text);
    expect(r.ok).toBe(true);
    if (!r.ok) return;
    expect(r.warnings).toEqual([]);
    const { setup } = r.experiment;
    expect(setup.data!.inputs).toBe(2);
    expect(Array.from(setup.data!.x)).toEqual([0.5, -1.25, 3, 1e-300, -0, 0.1 + 0.2]);
    expect(Object.is(setup.data!.x[4], -0)).toBe(true);
    expect(Array.from(setup.data!.y)).toEqual([2, -0.5, 7]);
  });

  it('wraps a long one-column list so that it still reads back exactly', () => {
    const long = taken('y', 'y_long', [14], Array.from({ length: 14 }, (_, i) => i / 7));
    const xs = taken('x', 'X_long', [14, 1], Array.from({ length: 14 }, (_, i) => -i));
    const wrapped = takenSpecText([xs, long], '2026-12-03');
    expect(wrapped).toMatch(/ {2}y: \[0, 0\.14285714285714285, .*,\n {6}0\.857142857142857/);
    const r = parseSpec(wrapped);
    expect(r.ok).toBe(true);
    if (!r.ok) return;
    expect(r.warnings).toEqual([]);
    expect(Array.from(r.experiment.setup.data!.y)).toEqual(Array.from(long.values));
  });

  it('records the names and the content hash, and warns once the values are edited', () => {
    expect(text).toContain('kernel: { "x": "X_train", "y": "y_train" }');
    expect(text).toContain(`sha256: ${takenHash([x.values, y.values])}`);
    const edited = parseSpec(text.replace('[2, -0.5, 7]', '[2, -0.5, 8]'));
    expect(edited.ok).toBe(true);
    if (!edited.ok) return;
    expect(edited.warnings).toEqual([
      expect.objectContaining({ path: 'data.from.sha256', message: expect.stringMatching(/does not match the values in data .*changed after they were taken from the kernel/) })
    ]);
  });

  it('stores a held-out split and hashes it after the training arrays', () => {
    const hx = taken('heldOut.x', 'X_val', [1, 2], [9, 8]);
    const hy = taken('heldOut.y', 'y_val', [1], [1.5]);
    const withHeld = takenSpecText([x, y, hx, hy], '2026-12-03');
    const r = parseSpec(withHeld);
    expect(r.ok).toBe(true);
    if (!r.ok) return;
    expect(r.warnings).toEqual([]);
    expect(r.experiment.setup.data!.heldOut!.rows).toBe(1);
    expect(withHeld).toContain(`sha256: ${takenHash([x.values, y.values, hx.values, hy.values])}`);
  });

  it('reads a malformed hash as a schema error', () => {
    const r = parseSpec(text.replace(/sha256: [0-9a-f]+/, 'sha256: xyz'));
    expect(r.ok).toBe(false);
    if (r.ok) return;
    expect(r.errors[0].path).toBe('data.from.sha256');
  });
});
