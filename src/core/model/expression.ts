/**
 * The user's own elementwise pieces (an activation f(x), or a loss term ℓ(y, t)) as plain
 * expression trees, evaluated with core's own elementary functions so a trajectory through a
 * user's expression gives the same bits in every JavaScript engine (never the engine's `Math`
 * transcendental functions, never `eval`).
 *
 * The spec layer (`experiment/expression.ts`) parses the user's text with a math-expression
 * library, derives missing derivatives symbolically and hands core these trees; core only
 * evaluates them. A tree is plain JSON, so it crosses a Worker boundary unchanged.
 */
import * as elementary from '../elementary';
import { powInt } from '../optim/powers';
import type { Activation } from './activations';
import type { Loss } from './losses';
import type { ActivationExpression, LossExpression } from '../setup';

// Bound once: in CommonJS builds (jest, tsx) an imported binding is a getter reached on every call.
const { erf, exp, expm1, log, log1p, sigmoid, softplus, tanh, sin, cos, pow } = elementary;

/** Functions of one argument an expression may call (each evaluated by core/elementary or exactly). */
export type ExprFunction =
  | 'exp' | 'expm1' | 'log' | 'log1p' | 'sqrt' | 'abs' | 'sign'
  | 'sin' | 'cos' | 'tan' | 'sec' | 'csc' | 'cot'
  | 'tanh' | 'sinh' | 'cosh' | 'sech' | 'csch' | 'coth'
  | 'erf' | 'sigmoid' | 'softplus';

/** Every callable function name (the spec layer checks names against it). */
export const EXPR_FUNCTIONS: readonly ExprFunction[] = ['exp', 'expm1', 'log', 'log1p', 'sqrt', 'abs', 'sign', 'sin', 'cos', 'tan', 'sec', 'csc', 'cot',
  'tanh', 'sinh', 'cosh', 'sech', 'csch', 'coth', 'erf', 'sigmoid', 'softplus'];

/** A plain expression tree over numbered variables (`index` into the argument list). */
export type Expr =
  | { op: 'const'; value: number }
  | { op: 'var'; index: number }
  | { op: 'neg'; arg: Expr }
  | { op: 'add' | 'sub' | 'mul' | 'div' | 'pow'; left: Expr; right: Expr }
  | { op: 'call'; fn: ExprFunction; arg: Expr };

/** Largest integer exponent evaluated by repeated multiplication (larger ones use `pow`). */
const MAX_INT_POWER = 64;

/** sinh by expm1 (no cancellation near 0): (expm1(x) − expm1(−x))/2. */
function sinh(x: number): number {
  return 0.5 * (expm1(x) - expm1(-x));
}

/** cosh = (e^x + e^−x)/2. */
function cosh(x: number): number {
  return 0.5 * (exp(x) + exp(-x));
}

/** Applies one named function with core's elementary functions (exhaustive). */
export function applyFunction(fn: ExprFunction, x: number): number {
  switch (fn) {
    case 'exp': return exp(x);
    case 'expm1': return expm1(x);
    case 'log': return log(x);
    case 'log1p': return log1p(x);
    case 'sqrt': return Math.sqrt(x); // correctly rounded by IEEE 754: the same in every engine
    case 'abs': return Math.abs(x);
    case 'sign': return Math.sign(x);
    case 'sin': return sin(x);
    case 'cos': return cos(x);
    case 'tan': return sin(x) / cos(x);
    case 'sec': return 1 / cos(x);
    case 'csc': return 1 / sin(x);
    case 'cot': return cos(x) / sin(x);
    case 'tanh': return tanh(x);
    case 'sinh': return sinh(x);
    case 'cosh': return cosh(x);
    case 'sech': return 1 / cosh(x);
    case 'csch': return 1 / sinh(x);
    case 'coth': return 1 / tanh(x);
    case 'erf': return erf(x);
    case 'sigmoid': return sigmoid(x);
    case 'softplus': return softplus(x);
    default: {
      const never: never = fn;
      throw new Error(`unknown function '${String(never)}'`);
    }
  }
}

/** A compiled expression: its value at the arguments in `env` (variable i is env[i]). */
export type CompiledExpr = (env: Float64Array) => number;

/**
 * Turns a tree into nested closures (no code from strings). Integer constant exponents up to
 * 64 in magnitude are repeated multiplication (`powInt`, exact IEEE products), others core's `pow`.
 */
export function compileExpr(e: Expr): CompiledExpr {
  switch (e.op) {
    case 'const': { const v = e.value; return () => v; }
    case 'var': { const i = e.index; return (env) => env[i]; }
    case 'neg': { const a = compileExpr(e.arg); return (env) => -a(env); }
    case 'add': { const a = compileExpr(e.left); const b = compileExpr(e.right); return (env) => a(env) + b(env); }
    case 'sub': { const a = compileExpr(e.left); const b = compileExpr(e.right); return (env) => a(env) - b(env); }
    case 'mul': { const a = compileExpr(e.left); const b = compileExpr(e.right); return (env) => a(env) * b(env); }
    case 'div': { const a = compileExpr(e.left); const b = compileExpr(e.right); return (env) => a(env) / b(env); }
    case 'pow': {
      const a = compileExpr(e.left);
      const r = e.right;
      if (r.op === 'const' && Number.isInteger(r.value) && Math.abs(r.value) <= MAX_INT_POWER) {
        const n = Math.abs(r.value);
        return r.value >= 0 ? (env) => powInt(a(env), n) : (env) => 1 / powInt(a(env), n);
      }
      const b = compileExpr(r);
      return (env) => pow(a(env), b(env));
    }
    case 'call': { const a = compileExpr(e.arg); const fn = e.fn; return (env) => applyFunction(fn, a(env)); }
    default: {
      const never: never = e;
      throw new Error(`unknown expression node ${JSON.stringify(never)}`);
    }
  }
}

/** Number of nodes in a tree (the spec layer bounds it). */
export function exprSize(e: Expr): number {
  switch (e.op) {
    case 'const': case 'var': return 1;
    case 'neg': case 'call': return 1 + exprSize(e.arg);
    default: return 1 + exprSize(e.left) + exprSize(e.right);
  }
}

/**
 * The activation of a layer written as an expression of its pre-activation x: f, the user's
 * (or the derived) f′ and the derived f″ (f″ differentiates the f′ actually used, so the
 * R-operator stays consistent with the gradient even when f′ is wrong — the audit is what
 * tells a wrong f′ apart).
 */
export function expressionActivation(spec: ActivationExpression): Activation {
  const f = compileExpr(spec.f);
  const d1 = compileExpr(spec.d1);
  const d2 = compileExpr(spec.d2);
  const env = new Float64Array(1);
  return {
    name: 'expression', identity: false, piecewiseLinear: false,
    evaluate(a, fo, d1o, d2o, n) {
      for (let i = 0; i < n; i++) {
        env[0] = a[i];
        fo[i] = f(env);
        d1o[i] = d1(env);
        if (d2o) d2o[i] = d2(env);
      }
    },
  };
}

/**
 * The user's elementwise loss term as a {@link Loss}: the mean of ℓ(ŷ, t) over all n·K outputs
 * (targets as for mse), gradient ∂ℓ/∂ŷ / m and output Hessian-vector product ∂²ℓ/∂ŷ²·u / m.
 */
export function expressionLoss(spec: LossExpression): Loss {
  const f = compileExpr(spec.f);
  const d1 = compileExpr(spec.d1);
  const d2 = compileExpr(spec.d2);
  const env = new Float64Array(2);
  return {
    name: 'expression',
    targetWidth: (k) => k,
    value(out, y, n, k) {
      const m = n * k;
      let s = 0;
      for (let i = 0; i < m; i++) { env[0] = out[i]; env[1] = y[i]; s += f(env); }
      return s / m;
    },
    gradient(out, y, n, k, g) {
      const m = n * k;
      let s = 0;
      for (let i = 0; i < m; i++) { env[0] = out[i]; env[1] = y[i]; s += f(env); g[i] = d1(env) / m; }
      return s / m;
    },
    outputHvp(out, y, n, k, u, r) {
      const m = n * k;
      for (let i = 0; i < m; i++) { env[0] = out[i]; env[1] = y[i]; r[i] = (d2(env) * u[i]) / m; }
    },
  };
}
