/** The settings defaults in code are the ones schema/plugin.json declares (one source of truth for users). */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { DEFAULT_SETTINGS } from '../../../src/ui/ports';
import { DEFAULT_SPEC_LIMITS, LIMIT_NAMES } from '../../../src/experiment/limits';

/** The settings as the schema lists them: the spec limits are flat there, grouped under `limits` in code. */
const flat: Record<string, unknown> = { ...DEFAULT_SETTINGS, ...DEFAULT_SETTINGS.limits };
delete flat.limits;

const schema = JSON.parse(readFileSync(join(__dirname, '../../../schema/plugin.json'), 'utf8')) as {
  properties: Record<string, { default: unknown; minimum?: number; maximum?: number }>;
};

describe('settings defaults', () => {
  const names = Object.keys(schema.properties);

  it('declares the same settings in code and in the schema', () => {
    expect(names.length).toBeGreaterThan(5);
    expect(Object.keys(flat).sort()).toEqual([...names].sort());
  });

  it('has the spec limits of the spec reader as the defaults of the limit settings', () => {
    expect(LIMIT_NAMES).toHaveLength(6);
    for (const k of LIMIT_NAMES) expect(schema.properties[k].default).toBe(DEFAULT_SPEC_LIMITS[k]);
  });

  it.each(names)('%s has the schema default in code, inside its bounds', (name) => {
    const p = schema.properties[name];
    expect(flat[name]).toEqual(p.default);
    if (typeof p.default === 'number') {
      expect(p.default).toBeGreaterThanOrEqual(p.minimum ?? -Infinity);
      expect(p.default).toBeLessThanOrEqual(p.maximum ?? Infinity);
    }
  });
});
