/** Jest projects: `unit` (pure Node, no jsdom; numerics, spec, ledger, CLI) and `e2e` (browser). */
const tsJest = ['ts-jest', { tsconfig: { module: 'commonjs', moduleResolution: 'node', target: 'ES2021', esModuleInterop: true, resolveJsonModule: true, strict: true, types: ['node', 'jest'], isolatedModules: true } }];
/** hyparquet ships ES modules only: its files are compiled to CommonJS like ours (nothing else in node_modules is). */
const esmPackages = { '^.+/node_modules/hyparquet/.+\\.js$': ['ts-jest', { tsconfig: { ...tsJest[1].tsconfig, allowJs: true } }] };
const transformIgnorePatterns = ['/node_modules/(?!hyparquet/)'];
/** Build output and the Python environment hold package.json files that must not be seen as modules. */
const ignored = ['<rootDir>/.venv/', '<rootDir>/stepwell/labextension/', '<rootDir>/build/', '<rootDir>/lib/', '<rootDir>/dist/', '<rootDir>/.jupyter-local/', '<rootDir>/test-output/'];
module.exports = {
  projects: [
    {
      displayName: 'unit',
      testEnvironment: 'node',
      testMatch: ['<rootDir>/test/unit/**/*.test.ts', '<rootDir>/test/reference/**/*.test.ts'],
      transform: { '^.+\\.tsx?$': tsJest, ...esmPackages },
      transformIgnorePatterns,
      modulePathIgnorePatterns: ignored
    },
    {
      displayName: 'e2e',
      testEnvironment: 'node',
      testMatch: ['<rootDir>/test/e2e/**/*.test.ts'],
      transform: { '^.+\\.tsx?$': tsJest, ...esmPackages },
      transformIgnorePatterns,
      modulePathIgnorePatterns: ignored
    }
  ]
};
