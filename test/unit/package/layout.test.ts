/**
 * The extension's package: its runtime `dependencies` are exactly the packages its layers import
 * (the embedded app's packages are dev dependencies), `main` is what tsconfig.lib.json builds,
 * the settings folder holds settings schemas only, and the Python package has the same version.
 */
import * as fs from 'fs';
import * as path from 'path';

const ROOT = path.resolve(__dirname, '..', '..', '..');
const pkg = JSON.parse(fs.readFileSync(path.join(ROOT, 'package.json'), 'utf8')) as {
  version: string;
  main: string;
  dependencies: Record<string, string>;
  devDependencies: Record<string, string>;
  jupyterlab: { schemaDir: string; sharedPackages: Record<string, unknown> };
};
const LAYERS = ['plugin', 'ui', 'worker', 'ledger', 'experiment', 'core'];
/** Type-only imports served by a differently named types package. */
const TYPES_ONLY: Record<string, string> = { 'plotly.js': '@types/plotly.js' };

function sources(dir: string): string[] {
  return fs.readdirSync(dir, { withFileTypes: true }).flatMap(e => {
    const p = path.join(dir, e.name);
    return e.isDirectory() ? sources(p) : e.name.endsWith('.ts') ? [p] : [];
  });
}

/** Package names imported (by `from '…'`, `import '…'` or `declare module` re-exports) in the layers. */
function importedPackages(): Set<string> {
  const names = new Set<string>();
  for (const layer of LAYERS) {
    for (const file of sources(path.join(ROOT, 'src', layer))) {
      const text = fs.readFileSync(file, 'utf8');
      for (const m of text.matchAll(/(?:from|import)\s+'([^.'][^']*)'/g)) {
        const spec = m[1];
        names.add(spec.startsWith('@') ? spec.split('/').slice(0, 2).join('/') : spec.split('/')[0]);
      }
    }
  }
  return names;
}

describe('the extension package', () => {
  it('declares exactly the packages its layers import as runtime dependencies', () => {
    const imported = importedPackages();
    for (const [types, provider] of Object.entries(TYPES_ONLY)) {
      expect(imported.has(types)).toBe(true);
      expect(pkg.devDependencies[provider]).toBeDefined();
      imported.delete(types);
    }
    expect([...imported].sort()).toEqual(Object.keys(pkg.dependencies).sort());
  });

  it('keeps the embedded app and the test tools out of the runtime dependencies', () => {
    const runtime = Object.keys(pkg.dependencies);
    expect(runtime.filter(n => /-extension$|^@jupyterlite\/|^webpack|^jest|^tsx$|^playwright/.test(n))).toEqual([]);
  });

  it('does not share the engine worker’s packages (a Web Worker has no share scope)', () => {
    for (const name of ['ajv', 'yaml', 'ml-matrix', '@noble/hashes', '@stdlib/math-base-special-erf', 'papaparse', 'fflate']) {
      expect(pkg.jupyterlab.sharedPackages[name]).toBe(false);
    }
  });

  it('names as main the file tsconfig.lib.json compiles from the plugin entry', () => {
    const lib = JSON.parse(fs.readFileSync(path.join(ROOT, 'tsconfig.lib.json'), 'utf8')) as { compilerOptions: { rootDir: string; outDir: string } };
    const entry = path.join(lib.compilerOptions.rootDir, path.relative(lib.compilerOptions.outDir, pkg.main)).replace(/\.js$/, '.ts');
    expect(entry).toBe(path.join('src', 'plugin', 'index.ts'));
    expect(fs.existsSync(path.join(ROOT, entry))).toBe(true);
  });

  it('keeps only settings schemas in the settings folder (a server lists every JSON file there)', () => {
    const files = fs.readdirSync(path.join(ROOT, pkg.jupyterlab.schemaDir));
    expect(files).toEqual(['plugin.json']);
  });

  it('gives the Python package the version of package.json', () => {
    const pyproject = fs.readFileSync(path.join(ROOT, 'pyproject.toml'), 'utf8');
    expect(pyproject).toMatch(/\[tool\.hatch\.version\]\s*\n(#.*\n)*source = "nodejs"/);
    expect(pyproject).toContain('"stepwell/labextension" = "share/jupyter/labextensions/stepwell"');
  });
});
