/**
 * `cellFileNames`: the files a cell's spec (and a fork's patch chain) names, with the shortcut
 * for text that cannot name one (no "file" and no escape), which must never hide a name.
 */
import { cellFileNames } from '../../../src/experiment/patch';

const base = 'seed: 1\nmodel:\n  inputs: 2\n  layers:\n    - { units: 1 }\nloss: mse\nrecipe: { optimizer: sgd, lr: 0.1 }\n';

describe('cellFileNames', () => {
  it('finds every file key however the text spells it', () => {
    const cases: [string, string[]][] = [
      [`${base}data: { file: a.csv, features: [x], target: y }\n`, ['a.csv']],
      [`${base}data: { FILE: nope.csv }\n`, []],
      [`${base}data: { "\\x66ile": b.csv, features: [x], target: y }\n`, ['b.csv']],
      [`${base}data: { "\\u0066ile": c.csv, features: [x], target: y }\n`, ['c.csv']],
      [`${base}data: { targetFile: t.npy, x: [[1, 2]] }\n`, ['t.npy']],
      [`${base}data: { x: [[1, 2]], y: [1], heldOut: { file: h.csv } }\n`, ['h.csv']],
      [`${base.replace('inputs: 2', 'inputs: 2\n  weights: { file: w.safetensors }')}data: { x: [[1, 2]], y: [1] }\n`, ['w.safetensors']],
      [`${base}data: { x: [[1, 2]], y: [1] }\n`, []]
    ];
    expect(cases.length).toBe(8);
    for (const [text, names] of cases) expect(cellFileNames(text)).toEqual(names);
  });

  it("finds a name only a fork's patch adds", () => {
    const text = `${base}data: { x: [[1, 2]], y: [1] }\n`;
    expect(cellFileNames(text, [[{ 'data.heldOut': { file: 'later.csv' } }]])).toEqual(['later.csv']);
    expect(cellFileNames(text, [[{ lr: 0.5 }]])).toEqual([]);
  });
});
