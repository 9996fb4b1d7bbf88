/**
 * The precompiled spec and ledger validators are those of today's schemas, and nothing that runs
 * in the page or the worker generates code from strings (a strict Content-Security-Policy forbids
 * `eval` and `new Function`; ajv's run-time compiler uses them).
 */
import { spawnSync } from 'node:child_process';
import { join } from 'node:path';
import { buildSync } from 'esbuild';

const ROOT = join(__dirname, '../../..');

describe('precompiled validators', () => {
  it('match the schemas (run npm run gen:validators after changing a schema)', () => {
    const r = spawnSync(process.execPath, [join(ROOT, 'src/validators/generate.mjs'), '--check'], { encoding: 'utf8' });
    expect({ status: r.status, stderr: r.stderr }).toEqual({ status: 0, stderr: '' });
  });

  it.each([
    ['the engine worker', 'src/worker/engine.worker.ts'],
    ['the plugin', 'src/plugin/index.ts']
  ])('%s bundles without eval or new Function from our code or its numeric and parsing packages', (_name, entry) => {
    const out = buildSync({
      entryPoints: [join(ROOT, entry)],
      bundle: true,
      write: false,
      format: 'esm',
      platform: 'browser',
      metafile: true,
      logLevel: 'silent',
      loader: { '.svg': 'text', '.css': 'empty' },
      // JupyterLab, Lumino, CodeMirror and plotly are the host's, not ours
      external: ['@jupyterlab/*', '@jupyter/*', '@lumino/*', '@codemirror/*', 'plotly.js-basic-dist-min', 'yjs', 'react', 'react-dom'],
    });
    const inputs = Object.keys(out.metafile!.inputs);
    expect(inputs.some((f) => f.includes('experiment/spec-validator.generated'))).toBe(entry.includes('worker') || inputs.some((f) => f.includes('experiment/')));
    const text = out.outputFiles[0].text;
    expect(text.length).toBeGreaterThan(10_000);
    const hits = [...text.matchAll(/new Function\s*\(|(?<![.\w$])eval\s*\(/g)].map((m) => text.slice(Math.max(0, m.index! - 80), m.index! + 40));
    expect(hits).toEqual([]);
  });
});
