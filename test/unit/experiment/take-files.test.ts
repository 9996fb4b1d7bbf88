/**
 * "Take Data from the Kernel" with the arrays saved as .npy files next to the notebook: the bytes
 * are NumPy's own, the names never overwrite a file, and the cell whose spec names the files runs
 * the same experiment as the cell holding the values inline.
 */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { takenFileNames, takenNpy, takenSpecText, type TakenArray } from '../../../src/experiment/take';
import { parseSpec } from '../../../src/experiment';
import { Session } from '../../../src/core/session';

const FIX = join(__dirname, '../../reference/take');

const arr = (role: TakenArray['role'], name: string, shape: number[], values: number[]): TakenArray => ({ role, name, shape, dtype: 'float64', values: Float64Array.from(values) });

describe('taken arrays as .npy files', () => {
  it('are the bytes numpy.save writes for the same arrays', () => {
    // source: numpy 1.24.2 numpy.save (test/reference/take/make_taken_npy.py)
    const x = arr('x', 'X', [3, 2], [0.1, -2, 3e-310, 7, 1.5, -0]);
    const y = arr('y', 'y', [3], [0.25, -1, 1e300]);
    expect(Buffer.from(takenNpy(x)).equals(readFileSync(join(FIX, 'taken-x.npy')))).toBe(true);
    expect(Buffer.from(takenNpy(y)).equals(readFileSync(join(FIX, 'taken-y.npy')))).toBe(true);
  });

  it('get names from the kernel names that never overwrite a file', () => {
    const arrays = [arr('x', 'data.features', [2, 1], [1, 2]), arr('y', 'y_train', [2], [1, 2]), arr('heldOut.x', 'X_train', [1, 1], [3]), arr('heldOut.y', 'X_train', [1], [3])];
    const names = takenFileNames(arrays, (n) => n === 'y_train.npy' || n === 'X_train.npy');
    expect([...names]).toEqual([['x', 'data_features.npy'], ['y', 'y_train-2.npy'], ['heldOut.x', 'X_train-2.npy'], ['heldOut.y', 'X_train-3.npy']]);
  });

  it('make a cell whose spec names the files and runs the experiment the inline cell runs', () => {
    const rows = 12;
    const xs = Array.from({ length: rows * 2 }, (_, i) => Math.sin(i * 0.7) * 3);
    const ys = Array.from({ length: rows }, (_, i) => xs[2 * i] - 0.5 * xs[2 * i + 1]);
    const arrays = [arr('x', 'X_train', [rows, 2], xs), arr('y', 'y_train', [rows], ys), arr('heldOut.x', 'X_val', [2, 2], [1, 2, 3, 4]), arr('heldOut.y', 'y_val', [2], [-1, -1])];
    const names = takenFileNames(arrays, () => false);
    const text = takenSpecText(arrays, '2026-12-03', { kind: 'files', names });
    expect(text).toContain('  file: "X_train.npy"\n  targetFile: "y_train.npy"\n  heldOut: { file: "X_val.npy", targetFile: "y_val.npy" }');
    const files = new Map(arrays.map((a) => [names.get(a.role) as string, takenNpy(a)]));
    const fromFiles = parseSpec(text, 'auto', { files });
    const inline = parseSpec(takenSpecText(arrays, '2026-12-03'));
    if (!fromFiles.ok) throw new Error(fromFiles.errors.map((e) => e.message).join('; '));
    if (!inline.ok) throw new Error(inline.errors.map((e) => e.message).join('; '));
    const a = fromFiles.experiment.setup.data;
    const b = inline.experiment.setup.data;
    expect(a?.rows).toBe(rows);
    expect(Array.from(a?.x ?? [])).toEqual(Array.from(b?.x ?? []));
    expect(Array.from(a?.y ?? [])).toEqual(Array.from(b?.y ?? []));
    expect(Array.from(a?.heldOut?.x ?? [])).toEqual([1, 2, 3, 4]);
    expect(a?.origin?.files.map((f) => f.name)).toEqual(['X_train.npy', 'y_train.npy', 'X_val.npy', 'y_val.npy']);
    // common practice (no single source): the same numbers from a file and inline must give the same trajectory bit for bit
    const s1 = Session.create(fromFiles.experiment);
    const s2 = Session.create(inline.experiment);
    s1.step(5);
    s2.step(5);
    expect(s1.fingerprint()).toBe(s2.fingerprint());
  });
});
