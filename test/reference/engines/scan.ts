/**
 * Finds calls of engine-dependent Math functions (and `**`) in a bundled script with ESLint's
 * own `no-restricted-properties` / `no-restricted-syntax` rules, and names the bundled source
 * file (esbuild's `// path` section comments) each finding sits in.
 */
import { Linter } from 'eslint';

/**
 * The Math functions ECMAScript leaves "implementation-approximated".
 * source: ECMA-262 15th ed. (2024), §21.3.2 (Function Properties of the Math Object); the
 * exactly specified ones (abs, ceil, floor, fround, imul, max, min, round, sign, sqrt, trunc,
 * clz32) are not listed.
 */
export const APPROXIMATED_MATH = ['acos', 'acosh', 'asin', 'asinh', 'atan', 'atanh', 'atan2', 'cbrt', 'cos', 'cosh', 'exp', 'expm1', 'hypot', 'log', 'log1p', 'log10', 'log2', 'pow', 'sin', 'sinh', 'tan', 'tanh'];

/** One engine-dependent operation found in the bundle. */
export interface MathUse {
  /** The bundled file it comes from (esbuild's section comment), e.g. `node_modules/ml-matrix/matrix.js`. */
  file: string;
  line: number;
  /** The source line, trimmed. */
  text: string;
}

/** Every engine-dependent Math use in `script`, with the bundled file it comes from. */
export function engineMathUses(script: string): MathUse[] {
  const linter = new Linter({ configType: 'flat' });
  const messages = linter.verify(script, [{
    languageOptions: { ecmaVersion: 2022, sourceType: 'script' },
    linterOptions: { noInlineConfig: true }, // the bundled libraries' own eslint-disable comments must not hide anything
    rules: {
      'no-restricted-properties': ['error', ...APPROXIMATED_MATH.map((property) => ({ object: 'Math', property }))],
      'no-restricted-syntax': ['error', "BinaryExpression[operator='**']", "AssignmentExpression[operator='**=']"],
    },
  }]);
  const fatal = messages.find((m) => m.fatal);
  if (fatal) throw new Error(`the bundle does not parse: ${fatal.message} at line ${fatal.line}`);
  const lines = script.split('\n');
  const fileAt: string[] = [];
  let current = '(bundle prologue)';
  for (let i = 0; i < lines.length; i++) {
    const m = /^\s*\/\/ (\S+\.[cm]?[jt]s)$/.exec(lines[i]);
    if (m) current = m[1];
    fileAt.push(current);
  }
  const found = messages.filter((m) => m.ruleId === 'no-restricted-properties' || m.ruleId === 'no-restricted-syntax');
  return found.map((m) => ({ file: fileAt[m.line - 1], line: m.line, text: lines[m.line - 1].trim() }));
}
