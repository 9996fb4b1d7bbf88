/**
 * The pure pieces of the plugin layer: the marker line, the live spec check and the output
 * bundle a stepwell cell carries.
 */
import { checkSpec, hasMarker, MARKER } from '../../../src/plugin/registry';
import { isStepwellOutput, stepwellOutput } from '../../../src/plugin/cell-host';
import { STEPWELL_MIME } from '../../../src/ui/summary';
import { TEMPLATE_SPEC } from '../../../src/experiment';

describe('marker line', () => {
  it.each([
    ['# stepwell', true],
    ['#stepwell experiment', true],
    ['  # A stepwell experiment: one small model', true],
    ['# Stepwell — greenhouse', true],
    ['# stepwells are old water tanks', false],
    ['print("stepwell")', false],
    ['seed: 1\n# stepwell', false],
    ['', false]
  ])('%j → %s', (source, expected) => {
    expect(hasMarker(source)).toBe(expected);
  });

  it('matches the template a new cell starts from', () => {
    expect(hasMarker(TEMPLATE_SPEC)).toBe(true);
    expect(MARKER.flags).toContain('i');
  });
});

describe('live spec check', () => {
  it('returns no problems for the template and located problems for a broken spec', () => {
    expect(checkSpec(TEMPLATE_SPEC)).toEqual([]);
    const problems = checkSpec(TEMPLATE_SPEC.replace('lr: 0.1 ', 'lr: abc '));
    expect(problems.length).toBeGreaterThan(0);
    expect(problems[0].line).toBe(TEMPLATE_SPEC.split('\n').findIndex(l => l.includes('lr: 0.1')) + 1);
  });
});

describe('stepwell output bundle', () => {
  it('carries our mime type with the summary and a markdown fallback', () => {
    const out = stepwellOutput(null, '**Stepwell experiment**');
    expect(out.output_type).toBe('display_data');
    expect(isStepwellOutput(out.data)).toBe(true);
    expect(out.data[STEPWELL_MIME]).toEqual({ version: 2, summary: null });
    expect(out.data['text/markdown']).toBe('**Stepwell experiment**');
    expect(isStepwellOutput({ 'text/plain': 'x' })).toBe(false);
  });
});
