// Lint rules: the usual TypeScript rules plus the layering of DEVELOPERS.md, stated as
// `no-restricted-imports` per folder so a reader and an editor see which import crosses a layer.
import js from '@eslint/js';
import tseslint from 'typescript-eslint';

/**
 * Packages the pure numeric core may import: hashing, a dense matrix library, the CSV and ZIP
 * parsers the data readers use on bytes, and stdlib-js's plain-JavaScript fdlibm ports behind
 * core/elementary (checked to call no engine Math function).
 */
const CORE_PACKAGES = ['@noble/hashes', 'ml-matrix', 'papaparse', 'fflate', 'hyparquet', ...['cos', 'erf', 'pow', 'sin'].map((f) => `@stdlib/math-base-special-${f}`)];

/**
 * Math functions whose last bits ECMAScript leaves to the engine ("implementation-approximated"):
 * V8, SpiderMonkey and QuickJS differ, so core uses its own (core/elementary) and a notebook
 * stepped in one engine replays bit for bit in another. abs, min, max, floor, ceil, round,
 * trunc, sign, sqrt, fround, imul and clz32 are exactly specified and stay allowed.
 */
const ENGINE_MATH = ['exp', 'expm1', 'log', 'log1p', 'log2', 'log10', 'pow', 'sin', 'cos', 'tan', 'asin', 'acos', 'atan', 'atan2',
  'sinh', 'cosh', 'tanh', 'asinh', 'acosh', 'atanh', 'cbrt', 'hypot'];
const RANDOM_RULE = { object: 'Math', property: 'random', message: 'Draw from the session’s seeded Rng.' };

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
    'no-restricted-properties': ['error', RANDOM_RULE, ...ENGINE_MATH.map((property) => ({
      object: 'Math', property, message: `Math.${property} rounds differently per JavaScript engine: use ${property} from src/core/elementary (add it there if missing).`
    }))],
    'no-restricted-syntax': ['error',
      { selector: "BinaryExpression[operator='**']", message: '`**` is Math.pow, which engines round differently: use powInt (integer exponents) or pow from src/core/elementary.' },
      { selector: "AssignmentExpression[operator='**=']", message: '`**=` is Math.pow, which engines round differently: use powInt or pow from src/core/elementary.' }],
    'no-restricted-globals': ['error', ...['window', 'document', 'self', 'navigator', 'localStorage', 'fetch', 'XMLHttpRequest', 'postMessage'].map((name) => ({
      name, message: 'core/ runs in Node, a Worker and the tests alike: no browser globals.'
    })), { name: 'structuredClone', message: 'structuredClone is a host API (absent in SpiderMonkey\'s shell and QuickJS): use copyPlain from src/core/plain.ts.' }]
  }
}));

/**
 * core/probe/ (readouts and findings, recomputed on request, never replayed) may use the
 * engine's Math; DEVELOPERS.md says so. Everything else in core is on the stepping path or
 * already engine-independent.
 */
const probeBlock = {
  files: ['src/core/probe/**/*.ts'],
  rules: { 'no-restricted-properties': ['error', RANDOM_RULE], 'no-restricted-syntax': 'off' }
};

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
    files: ['src/figures/**/*.ts'],
    patterns: [toLayers(['ui', 'plugin', 'worker', 'ledger', 'experiment', 'cli', 'host'], 'figures/ turns plain data into figure descriptions and SVG: it may import core (types) only.')]
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
  { ignores: ['build/**', 'lib/**', 'node_modules/**', '.cache/**', 'test-output/**', '.venv/**', '.venv-torch/**', 'dist/**', 'stepwell/**', '.jupyter-local/**', 'src/host/**/*.mjs', 'src/host/federated-check/**', 'src/**/*.generated.ts', '**/*.cjs', '**/*.js'] },
  js.configs.recommended,
  ...tseslint.configs.recommended,
  {
    files: ['**/*.ts'],
    rules: {
      '@typescript-eslint/no-unused-vars': ['error', { argsIgnorePattern: '^_', varsIgnorePattern: '^_', destructuredArrayIgnorePattern: '^_' }],
      '@typescript-eslint/consistent-type-imports': ['error', { fixStyle: 'inline-type-imports' }],
      '@typescript-eslint/no-namespace': 'off',
      'no-restricted-properties': ['error', RANDOM_RULE],
      // no code from strings: a strict Content-Security-Policy forbids it, and specs are untrusted
      'no-eval': 'error',
      'no-implied-eval': 'error',
      'no-new-func': 'error',
      eqeqeq: ['error', 'always']
    }
  },
  {
    // Node scripts of the packaging (prebuilt extension, wheel, Python environment, real server,
    // static site), the validator generator and the WebAssembly assembler of core/wasm (run at build time, never imported).
    files: ['src/package/**/*.mjs', 'src/validators/**/*.mjs', 'src/core/wasm/assemble.mjs'],
    languageOptions: {
      globals: Object.fromEntries(['process', 'console', 'fetch', 'setTimeout', 'clearTimeout', 'setInterval', 'clearInterval', 'URL', 'Buffer'].map(n => [n, 'readonly']))
    }
  },
  ...coreBlocks,
  probeBlock,
  ...layerBlocks,
  uiBlock,
  {
    files: ['test/**/*.ts', 'demo-notebooks/**/*.ts'],
    // tests may load a bundled reference library (tfjs) from its text; product code never may
    rules: { '@typescript-eslint/no-explicit-any': 'off', '@typescript-eslint/no-non-null-assertion': 'off', 'no-new-func': 'off' }
  }
);
