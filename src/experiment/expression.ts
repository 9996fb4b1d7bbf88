/**
 * The user's own elementwise pieces as text: parsed with math.js's expression parser (a parser
 * into a tree, never `eval`), derived symbolically with math.js's `derivative` where the user
 * left the derivative out, and turned into core's plain expression trees (`core/model/expression.ts`),
 * which core evaluates with its own elementary functions.
 *
 * Problems carry the character offset inside the expression text, so the spec error points at
 * the line and column of the offending symbol.
 */
import { create, derivativeDependencies, parseDependencies, type MathNode } from 'mathjs';
import { EXPR_FUNCTIONS, exprSize, type Expr, type ExprFunction } from '../core/model/expression';
import type { ActivationExpression, LossExpression } from '../core/setup';

const math = create({ parseDependencies, derivativeDependencies });

/** Longest expression text accepted (characters). */
export const MAX_EXPRESSION_CHARS = 2000;
/** Most nodes of a tree after derivation (the second derivative of a long expression grows fast). */
export const MAX_EXPRESSION_NODES = 20000;

/** A problem in one expression: the sentence and the 0-based offset inside its text. */
export interface ExpressionProblem {
  message: string;
  at: number;
}

/** Functions that combine several values: never elementwise. */
const AGGREGATES = new Set(['sum', 'prod', 'mean', 'median', 'max', 'min', 'norm', 'std', 'variance', 'cumsum', 'dot', 'cross', 'det', 'inv',
  'transpose', 'size', 'concat', 'sort', 'count', 'mode', 'mad', 'quantileSeq', 'diff', 'hypot', 'flatten', 'reshape', 'squeeze']);
const CONSTANTS: Record<string, number> = { pi: Math.PI, e: Math.E };
const FUNCTIONS = new Set<string>(EXPR_FUNCTIONS);

type Read = { ok: true; tree: Expr; node: MathNode } | { ok: false; problem: ExpressionProblem };

/** Offset of the first whole-word occurrence of `word` in `text` (0 when absent). */
function offsetOf(text: string, word: string): number {
  const m = new RegExp(`(?<![A-Za-z0-9_])${word.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}(?![A-Za-z0-9_])`).exec(text);
  return m ? m.index : 0;
}

function nameOf(node: MathNode): string {
  return String((node as unknown as { name?: unknown }).name ?? '');
}

/** Thrown inside {@link toTree}; caught by its callers. */
class TreeProblem extends Error {
  constructor(message: string, readonly at: number) {
    super(message);
  }
}

/**
 * Converts a math.js tree into core's tree over `variables` (index = position in the list).
 * `text` is the source the offsets refer to (for derived trees: the text they came from).
 */
function toTree(node: MathNode, variables: readonly string[], text: string, what: string): Expr {
  const n = node as unknown as { type: string; value?: unknown; content?: MathNode; fn?: unknown; op?: string; args?: MathNode[]; name?: string };
  switch (n.type) {
    case 'ConstantNode': {
      if (typeof n.value !== 'number') throw new TreeProblem(`${what}: only numbers may appear as constants, got ${JSON.stringify(n.value)}`, offsetOf(text, String(n.value)));
      return { op: 'const', value: n.value };
    }
    case 'SymbolNode': {
      const name = nameOf(node);
      const index = variables.indexOf(name);
      if (index >= 0) return { op: 'var', index };
      if (name in CONSTANTS) return { op: 'const', value: CONSTANTS[name] };
      const vars = variables.map((v) => `'${v}'`).join(', ');
      throw new TreeProblem(`${what}: unknown symbol '${name}': the expression may use ${vars}, the constants pi and e, and the functions ${EXPR_FUNCTIONS.join(', ')}`, offsetOf(text, name));
    }
    case 'ParenthesisNode':
      return toTree(n.content as MathNode, variables, text, what);
    case 'OperatorNode': {
      const args = (n.args ?? []).map((a) => toTree(a, variables, text, what));
      const fn = String(n.fn);
      const binary = (op: 'add' | 'sub' | 'mul' | 'div' | 'pow'): Expr => {
        if (args.length < 2) throw new TreeProblem(`${what}: operator '${n.op}' needs two operands`, offsetOf(text, String(n.op)));
        return args.slice(1).reduce<Expr>((left, right) => ({ op, left, right }), args[0]);
      };
      switch (fn) {
        case 'add': return binary('add');
        case 'subtract': return binary('sub');
        case 'multiply': case 'dotMultiply': return binary('mul');
        case 'divide': case 'dotDivide': return binary('div');
        case 'pow': case 'dotPow': return binary('pow');
        case 'unaryMinus': return { op: 'neg', arg: args[0] };
        case 'unaryPlus': return args[0];
        default: {
          const at = Math.max(0, text.indexOf(String(n.op)));
          throw new TreeProblem(`${what}: the operator '${n.op}' is not supported: use + - * / ^ and functions`, at);
        }
      }
    }
    case 'FunctionNode': {
      const name = nameOf(n.fn as MathNode);
      const at = offsetOf(text, name);
      if (AGGREGATES.has(name)) throw new TreeProblem(`${what}: '${name}' combines several values, but the expression must be elementwise: it sees one value at a time`, at);
      if (!FUNCTIONS.has(name)) throw new TreeProblem(`${what}: unknown function '${name}': use one of ${EXPR_FUNCTIONS.join(', ')}`, at);
      const args = n.args ?? [];
      if (args.length !== 1) throw new TreeProblem(`${what}: ${name} takes one argument here, got ${args.length}${name === 'log' ? ' (natural logarithm; write log(x)/log(b) for base b)' : ''}`, at);
      return { op: 'call', fn: name as ExprFunction, arg: toTree(args[0], variables, text, what) };
    }
    case 'ArrayNode': case 'MatrixNode': case 'IndexNode': case 'AccessorNode': case 'RangeNode': case 'ObjectNode':
      throw new TreeProblem(`${what}: vectors, matrices and indexing are not elementwise: the expression sees one value at a time`, Math.max(0, text.search(/[[{:]/)));
    default:
      throw new TreeProblem(`${what}: ${n.type.replace(/Node$/, '').toLowerCase()} expressions are not supported: write one formula with + - * / ^ and functions`, 0);
  }
}

/** Parses `text` over `variables` into a math.js node and core's tree. */
export function readExpression(text: string, variables: readonly string[], what: string): Read {
  if (text.trim() === '') return { ok: false, problem: { message: `${what} is empty: write a formula such as tanh(${variables[0]})`, at: 0 } };
  if (text.length > MAX_EXPRESSION_CHARS) return { ok: false, problem: { message: `${what} is ${text.length} characters long, above the limit of ${MAX_EXPRESSION_CHARS}`, at: 0 } };
  let node: MathNode;
  try {
    node = math.parse(text);
  } catch (err) {
    const e = err as { message?: string; char?: number };
    const at = typeof e.char === 'number' ? Math.max(0, Math.min(text.length, e.char)) : 0;
    const reason = String(e.message ?? err).replace(/\s*\(char \d+\)\s*$/, '');
    return { ok: false, problem: { message: `${what} has bad syntax: ${reason}`, at } };
  }
  try {
    return { ok: true, tree: toTree(node, variables, text, what), node };
  } catch (err) {
    if (err instanceof TreeProblem) return { ok: false, problem: { message: err.message, at: err.at } };
    throw err;
  }
}

/** d(node)/d(variable) by math.js's symbolic rules, or the reason it cannot be derived. */
function derive(node: MathNode, variable: string, variables: readonly string[], what: string, text: string): { ok: true; tree: Expr; node: MathNode } | { ok: false; problem: ExpressionProblem } {
  let d: MathNode;
  try {
    d = math.derivative(node, variable);
  } catch (err) {
    const msg = String((err as { message?: string }).message ?? err);
    const fn = /function "([^"]+)"/.exec(msg);
    const why = fn ? `${fn[1]} has no symbolic derivative rule in math.js` : msg;
    return { ok: false, problem: { message: `${what}: ${why}`, at: fn ? offsetOf(text, fn[1]) : 0 } };
  }
  try {
    const tree = toTree(d, variables, d.toString(), what);
    if (exprSize(tree) > MAX_EXPRESSION_NODES) return { ok: false, problem: { message: `${what} has more than ${MAX_EXPRESSION_NODES} terms: write a shorter derivative yourself`, at: 0 } };
    return { ok: true, tree, node: d };
  } catch (err) {
    if (err instanceof TreeProblem) return { ok: false, problem: { message: `${what}: the derived formula ${d.toString()} uses something core cannot evaluate (${err.message})`, at: 0 } };
    throw err;
  }
}

/** Which key of `{ expr, derivative }` a problem belongs to. */
export type ExpressionKey = 'expr' | 'derivative';

/** Outcome of {@link activationExpression} and {@link lossExpression}. */
export type ExpressionRead<T> =
  | { ok: true; value: T }
  | { ok: false; key: ExpressionKey; problem: ExpressionProblem };

/** The trees of one elementwise piece over `variables`, differentiated in the first. */
interface Pieces {
  expr: string;
  derivative: string;
  derivedBy: 'user' | 'symbolic';
  f: Expr;
  d1: Expr;
  d2: Expr;
}

function elementwise(expr: string, derivative: string | undefined, variables: readonly string[], what: string, example: string): ExpressionRead<Pieces> {
  const wrt = variables[0];
  const f = readExpression(expr, variables, what);
  if (!f.ok) return { ok: false, key: 'expr', problem: f.problem };
  let d1: { tree: Expr; node: MathNode; text: string };
  if (derivative !== undefined) {
    const r = readExpression(derivative, variables, 'the derivative');
    if (!r.ok) return { ok: false, key: 'derivative', problem: r.problem };
    d1 = { tree: r.tree, node: r.node, text: derivative };
  } else {
    const r = derive(f.node, wrt, variables, `cannot derive the derivative of ${JSON.stringify(expr)} with respect to ${wrt} (write derivative: yourself, e.g. ${example})`, expr);
    if (!r.ok) return { ok: false, key: 'expr', problem: r.problem };
    d1 = { tree: r.tree, node: r.node, text: r.node.toString() };
  }
  const key: ExpressionKey = derivative !== undefined ? 'derivative' : 'expr';
  const d2 = derive(d1.node, wrt, variables, `cannot derive the second derivative (Hessian products need it) from ${JSON.stringify(d1.text)}; write the derivative with functions that have rules (exp, log, sqrt, abs, sin, cos, tan, sinh, cosh, tanh, sech)`, derivative ?? expr);
  if (!d2.ok) return { ok: false, key, problem: d2.problem };
  return { ok: true, value: { expr, derivative: d1.text, derivedBy: derivative !== undefined ? 'user' : 'symbolic', f: f.tree, d1: d1.tree, d2: d2.tree } };
}

/**
 * Reads an activation written as `expr` of the pre-activation x, with the user's `derivative`
 * when given (else derived symbolically), and the second derivative derived from the f′ used.
 */
export function activationExpression(expr: string, derivative: string | undefined): ExpressionRead<ActivationExpression> {
  return elementwise(expr, derivative, ['x'], 'the activation expression', '1 - tanh(x)^2');
}

/**
 * Reads an elementwise loss term `expr` of the output y and target t, with the user's ∂/∂y when
 * given (else derived symbolically), and ∂²/∂y² derived from the derivative used.
 */
export function lossExpression(expr: string, derivative: string | undefined): ExpressionRead<LossExpression> {
  return elementwise(expr, derivative, ['y', 't'], 'the loss expression', '2 * (y - t)');
}
