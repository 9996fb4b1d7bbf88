/**
 * The `%%stepwell` first line: a Python kernel runs it as a cell magic; the spec parser
 * ignores it but counts it, so line and column of every problem are those of the cell's text.
 * Expected positions are counted by hand from the fixtures (1-based).
 */
import { maskMagicLine, parseSpec, readSpecValue } from '../../../src/experiment';
import { hasMarker } from '../../../src/plugin/registry';

const SPEC = [
  'seed: 3', //                                   1 (2 with the magic line)
  'model:', //                                    2
  '  inputs: 1', //                               3
  '  layers: [{ units: 0 }]', //                  4  units value at col 21
  'data: { x: [[0], [1]], y: [0, 1] }' //         5
].join('\n');

describe('the %%stepwell magic line', () => {
  it('is blanked to spaces of the same length, leaving the rest of the text in place', () => {
    const text = '%%stepwell --quiet\nseed: 1\n';
    const masked = maskMagicLine(text);
    expect(masked).toHaveLength(text.length);
    expect(masked).toBe(`${' '.repeat(18)}\nseed: 1\n`);
    expect(maskMagicLine('seed: 1\n%%stepwell\n')).toBe('seed: 1\n%%stepwell\n');
    expect(maskMagicLine('%%stepwellish\nseed: 1')).toBe('%%stepwellish\nseed: 1');
  });

  it('gives the same experiment as the spec without it', () => {
    const fixed = SPEC.replace('units: 0', 'units: 1');
    const plain = parseSpec(fixed);
    const magic = parseSpec(`%%stepwell\n${fixed}`);
    expect(plain.ok && magic.ok).toBe(true);
    if (!plain.ok || !magic.ok) return;
    expect(magic.experiment).toEqual(plain.experiment);
    expect(magic.warnings).toEqual(plain.warnings);
  });

  it('keeps the line and column of a schema problem those of the cell text', () => {
    const plain = parseSpec(SPEC);
    const magic = parseSpec(`%%stepwell\n${SPEC}`);
    expect(plain.ok || magic.ok).toBe(false);
    if (plain.ok || magic.ok) return;
    expect(plain.errors).toEqual([expect.objectContaining({ path: 'model.layers[0].units', line: 4, col: 21 })]);
    expect(magic.errors).toEqual([expect.objectContaining({ path: 'model.layers[0].units', line: 5, col: 21 })]);
  });

  it('keeps the line and column of a YAML syntax problem those of the cell text', () => {
    const r = parseSpec('%%stepwell\nseed: 1\nmodel: { inputs: 1\n');
    expect(r.ok).toBe(false);
    if (r.ok) return;
    expect(r.errors[0].line).toBeGreaterThanOrEqual(3);
  });

  it('is accepted before strict JSON', () => {
    const json = '%%stepwell\n{"seed": 1, "model": {"inputs": 1, "layers": [{"units": 1}]}, "data": {"x": [[0], [1]], "y": [0, 1]}}';
    expect(parseSpec(json, 'json').ok).toBe(true);
    const bad = parseSpec('%%stepwell\n{"seed": 1,}', 'json');
    expect(bad.ok).toBe(false);
    if (bad.ok) return;
    expect(bad.errors[0].line).toBe(2);
  });

  it('is read away by readSpecValue too', () => {
    expect(readSpecValue('%%stepwell\nseed: 5\n')).toEqual({ ok: true, value: { seed: 5 } });
  });

  it('must be the first line and the whole word', () => {
    // A YAML directive line is not a spec: the parser says so instead of guessing.
    expect(parseSpec('%%stepwellx\nseed: 1\n').ok).toBe(false);
    expect(parseSpec('seed: 1\n%%stepwell\n').ok).toBe(false);
  });

  it('marks the cell as a stepwell cell, with or without the comment line', () => {
    expect(hasMarker('%%stepwell\nseed: 1')).toBe(true);
    expect(hasMarker('%%stepwell')).toBe(true);
    expect(hasMarker('%%stepwell_other\nseed: 1')).toBe(false);
    expect(hasMarker('%%time\nx = 1')).toBe(false);
  });
});
