/**
 * The user's own activations and loss terms in an exported script: each formula tree written as a
 * torch expression, wrapped in a `torch.autograd.Function` whose backward uses the derivative
 * Stepwell used (the user's, right or wrong, or the derived one), so the script follows the same
 * trajectory as the cell instead of autograd's derivative of the formula.
 */
import type { Expr, ExprFunction } from '../../core/model/expression';
import type { ActivationExpression, LossExpression } from '../../core/setup';
import { py, pyString } from './py-text';

/** The torch spelling of one function applied to the Python text `a`. */
function call(fn: ExprFunction, a: string): string {
  switch (fn) {
    case 'exp': case 'expm1': case 'log': case 'log1p': case 'sqrt': case 'abs': case 'sign':
    case 'sin': case 'cos': case 'tan': case 'tanh': case 'sinh': case 'cosh': case 'erf': case 'sigmoid':
      return `torch.${fn}(${a})`;
    case 'sec': return `(1 / torch.cos(${a}))`;
    case 'csc': return `(1 / torch.sin(${a}))`;
    case 'cot': return `(torch.cos(${a}) / torch.sin(${a}))`;
    case 'sech': return `(1 / torch.cosh(${a}))`;
    case 'csch': return `(1 / torch.sinh(${a}))`;
    case 'coth': return `(1 / torch.tanh(${a}))`;
    case 'softplus': return `F.softplus(${a})`;
    default: {
      const never: never = fn;
      throw new Error(`no torch spelling for ${String(never)}`);
    }
  }
}

/** A formula tree as Python text over the variable names `vars` (index i ↦ vars[i]). */
export function pyExpr(e: Expr, vars: readonly string[]): string {
  switch (e.op) {
    case 'const': return e.value < 0 ? `(${py(e.value)})` : py(e.value);
    case 'var': return vars[e.index];
    case 'neg': return `(-${pyExpr(e.arg, vars)})`;
    case 'add': return `(${pyExpr(e.left, vars)} + ${pyExpr(e.right, vars)})`;
    case 'sub': return `(${pyExpr(e.left, vars)} - ${pyExpr(e.right, vars)})`;
    case 'mul': return `(${pyExpr(e.left, vars)} * ${pyExpr(e.right, vars)})`;
    case 'div': return `(${pyExpr(e.left, vars)} / ${pyExpr(e.right, vars)})`;
    case 'pow': return `(${pyExpr(e.left, vars)} ** ${pyExpr(e.right, vars)})`;
    case 'call': return call(e.fn, pyExpr(e.arg, vars));
    default: {
      const never: never = e;
      throw new Error(`unknown expression node ${JSON.stringify(never)}`);
    }
  }
}

/** Class definitions of layer k's own activation: `OwnActivation{k}` (an nn.Module). */
export function activationClass(k: number, a: ActivationExpression): string[] {
  // `+ 0 * x` keeps a constant formula a tensor of x's shape
  return [
    `class _OwnFunction${k}(torch.autograd.Function):`,
    `    """Layer ${k}: f(x) = ${a.expr}; backward with f'(x) = ${a.derivative} (${a.derivedBy === 'user' ? 'as written in the spec' : 'derived by Stepwell'})."""`,
    '',
    '    @staticmethod',
    '    def forward(ctx, x):',
    '        ctx.save_for_backward(x)',
    `        return ${pyExpr(a.f, ['x'])} + 0 * x`,
    '',
    '    @staticmethod',
    '    def backward(ctx, g):',
    '        (x,) = ctx.saved_tensors',
    `        return g * (${pyExpr(a.d1, ['x'])} + 0 * x)`,
    '',
    '',
    `class OwnActivation${k}(nn.Module):`,
    `    """The activation ${pyString(a.expr).slice(1, -1)} of the spec's layer ${k}."""`,
    '',
    '    def forward(self, x):',
    `        return _OwnFunction${k}.apply(x)`,
  ];
}

/** Class definition of the own loss term: `OwnLoss.apply(out, y)` is the mean of ℓ(out, y), backward with the derivative used. */
export function lossClass(l: LossExpression): string[] {
  return [
    'class OwnLoss(torch.autograd.Function):',
    `    """Mean of l(y, t) = ${l.expr} over every output; backward with dl/dy = ${l.derivative} (${l.derivedBy === 'user' ? 'as written in the spec' : 'derived by Stepwell'})."""`,
    '',
    '    @staticmethod',
    '    def forward(ctx, y, t):',
    '        ctx.save_for_backward(y, t)',
    `        return (${pyExpr(l.f, ['y', 't'])} + 0 * y).mean()`,
    '',
    '    @staticmethod',
    '    def backward(ctx, g):',
    '        y, t = ctx.saved_tensors',
    `        return g * (${pyExpr(l.d1, ['y', 't'])} + 0 * y) / y.numel(), None`,
  ];
}
