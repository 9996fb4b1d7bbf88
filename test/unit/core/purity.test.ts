/**
 * Keeps `src/core/` pure (ARCHITECTURE.md): it runs in Node, in a Web Worker and in tests, so
 * it may import only itself and a short list of general-purpose numeric/hash packages, never
 * touch DOM globals, and draw randomness only from its seeded generator.
 */
import { readdirSync, readFileSync, statSync } from 'node:fs';
import { join, relative, resolve } from 'node:path';

const CORE = resolve(__dirname, '../../../src/core');
const ALLOWED_PACKAGES = ['@stdlib/math-base-special-erf', '@noble/hashes/sha256', '@noble/hashes/utils', 'ml-matrix'];

function files(dir: string): string[] {
  return readdirSync(dir).flatMap((f) => {
    const p = join(dir, f);
    return statSync(p).isDirectory() ? files(p) : p.endsWith('.ts') ? [p] : [];
  });
}

const sources = files(CORE).map((p) => ({ path: relative(CORE, p), text: readFileSync(p, 'utf8') }));

function stripComments(text: string): string {
  return text.replace(/\/\*[\s\S]*?\*\//g, '').replace(/(^|[^:])\/\/.*$/gm, '$1');
}

describe('core/ purity', () => {
  it('has sources to check', () => expect(sources.length).toBeGreaterThan(5));

  it.each(sources.map((s) => [s.path, s.text]))('%s imports only core/ and allowed packages', (path, text) => {
    const specs = [...text.matchAll(/(?:import|export)\s[^'"]*?from\s+['"]([^'"]+)['"]|import\(\s*['"]([^'"]+)['"]\s*\)|require\(\s*['"]([^'"]+)['"]\s*\)/g)].map((m) => m[1] ?? m[2] ?? m[3]);
    for (const s of specs) {
      if (s.startsWith('.')) {
        const target = resolve(CORE, path, '..', s);
        expect({ path, import: s, insideCore: target.startsWith(CORE) }).toEqual({ path, import: s, insideCore: true });
      } else {
        expect({ path, import: s, allowed: ALLOWED_PACKAGES.includes(s) }).toEqual({ path, import: s, allowed: true });
      }
    }
  });

  it.each(sources.map((s) => [s.path, stripComments(s.text)]))('%s uses no DOM globals and no Math.random', (path, code) => {
    const banned = code.match(/\bMath\.random\b|\b(?:document|window|localStorage|navigator|fetch|XMLHttpRequest)\s*[.(]/g);
    expect({ path, banned }).toEqual({ path, banned: null });
  });
});
