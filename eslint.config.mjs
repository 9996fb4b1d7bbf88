// Lint rules: the usual TypeScript rules plus the layering of DEVELOPERS.md, stated as
// `no-restricted-imports` per folder so a reader and an editor see which import crosses a layer.
import js from '@eslint/js';
import tseslint from 'typescript-eslint';

/** Packages the pure numeric core may import (hashing, erf, a dense matrix library, and the CSV and ZIP parsers the data readers use on bytes). */
const CORE_PACKAGES = ['@noble/hashes', '@stdlib/math-base-special-erf', 'ml-matrix', 'papaparse', 'fflate'];

const escape = (s) => s.replace(/[.*+?^${}()|[\]\\/]/g, '\\$&');

/** A pattern for relative imports reaching one of `layers` of src/ (at any depth). */
const toLayers = (layers, message) => ({ regex: `^(\\.\\./)+(${layers.join('|')})(/|$)`, message });
/** A pattern for package imports under one of `scopes`. */
const toPackages = (scopes, message) => ({ regex: `^(${scopes.map(escape).join('|')})(/|$)`, message });

const JUPYTERLAB = ['@jupyterlab', '@jupyter', '@codemirror'];

/**
 * core/: nothing outside core but its numeric packages. A file `depth` folders below src/core
 * escapes core with `depth + 1` leading `../`, so one block per depth states that exactly.
 */
const coreBlocks = [0, 1, 2, 3, 4].map((depth) => ({
  files: [`src/core/${'*/'.repeat(depth)}*.ts`],
  rules: {
    'no-restricted-imports': ['error', {
      patterns: [
        { regex: `^(\\.\\./){${depth + 1}}`, message: 'core/ is pure numerics: it imports nothing outside src/core.' },
        { regex: `^(?!\\.|(${CORE_PACKAGES.map(escape).join('|')})(/|$))`, message: `core/ imports only ${CORE_PACKAGES.join(', ')} besides itself.` }
      ]
    }],
    'no-restricted-globals': ['error', ...['window', 'document', 'self', 'navigator', 'localStorage', 'fetch', 'XMLHttpRequest', 'postMessage'].map((name) => ({
      name, message: 'core/ runs in Node, a Worker and the tests alike: no browser globals.'
    }))]
  }
}));

/** Layers below plugin/ (and what each may not reach). */
const layerBlocks = [
  {
    files: ['src/experiment/**/*.ts'],
    patterns: [toLayers(['ui', 'plugin', 'worker', 'ledger', 'cli', 'host'], 'experiment/ sits just above core: it may import core only.')]
  },
  {
    files: ['src/ledger/**/*.ts'],
    patterns: [toLayers(['ui', 'plugin', 'worker', 'cli', 'host'], 'ledger/ may import core and experiment only.')]
  },
  {
    files: ['src/worker/**/*.ts'],
    patterns: [toLayers(['ui', 'plugin', 'cli', 'host'], 'worker/ runs below the UI: it may import core, experiment and ledger.')]
  },
  {
    files: ['src/cli/**/*.ts'],
    patterns: [toLayers(['ui', 'plugin', 'worker', 'host'], 'cli/ works over core, experiment and ledger (no browser layers).')]
  }
].map(({ files, patterns }) => ({
  files,
  rules: {
    'no-restricted-imports': ['error', {
      patterns: [...patterns, toPackages([...JUPYTERLAB, '@lumino', 'plotly.js-basic-dist-min'], 'Only plugin/ and ui/ touch JupyterLab, Lumino or plotly.')]
    }]
  }
}));

/** ui/: Lumino and plotly yes, JupyterLab no; from core only types (numbers come from the worker). */
const uiBlock = {
  files: ['src/ui/**/*.ts'],
  rules: {
    'no-restricted-imports': 'off',
    '@typescript-eslint/no-restricted-imports': ['error', {
      patterns: [
        toLayers(['plugin', 'host', 'cli'], 'ui/ may not import plugin/, host/ or cli/.'),
        toPackages(JUPYTERLAB, 'Only plugin/ imports JupyterLab; ui/ gets what it needs through ports.'),
        { ...toLayers(['core'], 'ui/ imports only types from core/: numbers are computed in the worker.'), allowTypeImports: true }
      ]
    }]
  }
};

export default tseslint.config(
  { ignores: ['build/**', 'lib/**', 'node_modules/**', '.cache/**', 'test-output/**', '.venv/**', '.venv-torch/**', 'dist/**', 'stepwell/**', '.jupyter-local/**', 'src/host/**/*.mjs', 'src/host/federated-check/**', '**/*.cjs', '**/*.js'] },
  js.configs.recommended,
  ...tseslint.configs.recommended,
  {
    files: ['**/*.ts'],
    rules: {
      '@typescript-eslint/no-unused-vars': ['error', { argsIgnorePattern: '^_', varsIgnorePattern: '^_', destructuredArrayIgnorePattern: '^_' }],
      '@typescript-eslint/consistent-type-imports': ['error', { fixStyle: 'inline-type-imports' }],
      '@typescript-eslint/no-namespace': 'off',
      'no-restricted-properties': ['error', { object: 'Math', property: 'random', message: 'Draw from the session’s seeded Rng.' }],
      eqeqeq: ['error', 'always']
    }
  },
  {
    // Node scripts of the packaging: prebuilt extension, wheel, Python environment, real server, static site.
    files: ['src/package/**/*.mjs'],
    languageOptions: {
      globals: Object.fromEntries(['process', 'console', 'fetch', 'setTimeout', 'clearTimeout', 'setInterval', 'clearInterval', 'URL', 'Buffer'].map(n => [n, 'readonly']))
    }
  },
  ...coreBlocks,
  ...layerBlocks,
  uiBlock,
  {
    files: ['test/**/*.ts', 'demo-notebooks/**/*.ts'],
    rules: { '@typescript-eslint/no-explicit-any': 'off', '@typescript-eslint/no-non-null-assertion': 'off' }
  }
);
