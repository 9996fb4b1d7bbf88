/** The settings defaults in code are the ones schema/plugin.json declares (one source of truth for users). */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { DEFAULT_SETTINGS } from '../../../src/ui/ports';

const schema = JSON.parse(readFileSync(join(__dirname, '../../../schema/plugin.json'), 'utf8')) as {
  properties: Record<string, { default: unknown; minimum?: number; maximum?: number }>;
};

describe('settings defaults', () => {
  const names = Object.keys(schema.properties);

  it('declares the same settings in code and in the schema', () => {
    expect(names.length).toBeGreaterThan(5);
    expect(Object.keys(DEFAULT_SETTINGS).sort()).toEqual([...names].sort());
  });

  it.each(names)('%s has the schema default in code, inside its bounds', (name) => {
    const p = schema.properties[name];
    expect((DEFAULT_SETTINGS as unknown as Record<string, unknown>)[name]).toEqual(p.default);
    if (typeof p.default === 'number') {
      expect(p.default).toBeGreaterThanOrEqual(p.minimum ?? -Infinity);
      expect(p.default).toBeLessThanOrEqual(p.maximum ?? Infinity);
    }
  });
});
