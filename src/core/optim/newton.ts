/**
 * Damped Newton and Gauss-Newton for small models (Nocedal & Wright 2006, §3.4 and §10.3;
 * Levenberg 1944 / Marquardt 1963 damping):
 *
 *   build the dense P × P matrix M column by column from P exact products (hvp or gnvp on the
 *   curvature rows), symmetrize ½(M + Mᵀ), solve (M + λI)·d = −g by Cholesky (ml-matrix);
 *   when M + λI is not positive definite, raise λ tenfold (Levenberg-style) and retry.
 *   After a successful solve the next update starts from max(damping, λ/10).
 *   Step: strong Wolfe (c1 = 1e-4, c2 = 0.9) from t = lr (use lr = 1 for the pure Newton
 *   step), Brent along d, or the fixed step lr ('none').
 *
 * Refuses models with more than 2000 parameters (the matrix would hold 4·10⁶ entries and need
 * P products per step). Evaluations reported include the P curvature products.
 * State: scalars `lambda` (current damping) and `stepLength` (the accepted t of the last update).
 */
import { CholeskyDecomposition, Matrix } from 'ml-matrix';
import { dot } from '../objective';
import type { OptimizerName, Recipe } from '../setup';
import type { OptimizerState } from '../state';
import { lineFunctionWithSlope, minimizeAlong } from './linesearch/along';
import { strongWolfe } from './linesearch/wolfe';
import { NEWTON_STATE, stateOf } from './layout';
import type { OptimizerContext, OptimizerFamily } from './types';

/** Largest parameter count for which the dense matrix is built. */
export const DENSE_LIMIT = 2000;
/** Damping is raised at most this many times per update before giving up. */
const MAX_RAISES = 40;

function initNewton(kind: OptimizerName, parameterCount: number, recipe: Recipe): OptimizerState {
  if (parameterCount > DENSE_LIMIT) {
    throw new Error(`optimizer '${kind}' builds the dense ${parameterCount} × ${parameterCount} curvature matrix; this model has P = ${parameterCount} parameters, the limit is ${DENSE_LIMIT}. Use 'lbfgs' or 'cg' instead.`);
  }
  if (!(recipe.damping >= 0)) throw new Error(`recipe.damping must be a non-negative number, got ${recipe.damping}`);
  return { kind, t: 0, buffers: {}, scalars: { lambda: recipe.damping, stepLength: 0 } };
}

function updateNewton(gaussNewton: boolean, g: Float64Array, state: OptimizerState, w: Float64Array, ctx: OptimizerContext, out: Float64Array): number {
  const { scalars } = stateOf(NEWTON_STATE, state);
  const p = g.length;
  let finite = Number.isFinite(ctx.loss);
  for (let i = 0; i < p && finite; i++) finite = Number.isFinite(g[i]);
  if (!finite) {
    // a non-finite value or gradient: stay in place (the record shows it) instead of solving with NaN
    out.fill(0);
    scalars.stepLength = 0;
    return 0;
  }
  const recipe = ctx.recipe;
  const e = ctx.work.vector('newton.unit');
  const col = ctx.work.vector('newton.column');
  const m = new Matrix(p, p);
  e.fill(0);
  for (let j = 0; j < p; j++) {
    e[j] = 1;
    if (gaussNewton) ctx.objective.gnvp(w, e, col, ctx.curvatureRows);
    else ctx.objective.hvp(w, e, col, ctx.curvatureRows);
    e[j] = 0;
    for (let i = 0; i < p; i++) m.set(i, j, col[i]);
  }
  for (let i = 0; i < p; i++) {
    for (let j = i + 1; j < p; j++) {
      const s = 0.5 * (m.get(i, j) + m.get(j, i));
      m.set(i, j, s);
      m.set(j, i, s);
    }
  }
  const rhs = new Matrix(p, 1);
  for (let i = 0; i < p; i++) rhs.set(i, 0, -g[i]);
  let lambda = scalars.lambda;
  let solved: Matrix | null = null;
  for (let k = 0; k <= MAX_RAISES; k++) {
    const a = m.clone();
    for (let i = 0; i < p; i++) a.set(i, i, a.get(i, i) + lambda);
    const chol = new CholeskyDecomposition(a);
    if (chol.isPositiveDefinite()) {
      solved = chol.solve(rhs);
      break;
    }
    lambda = lambda > 0 ? lambda * 10 : 1e-8;
  }
  if (solved === null) throw new Error(`${state.kind}: curvature matrix not positive definite even with damping ${lambda}; the objective may be non-finite here`);
  const d = ctx.work.vector('newton.dir');
  for (let i = 0; i < p; i++) d[i] = solved.get(i, 0);
  scalars.lambda = Math.max(recipe.damping, lambda / 10);
  const gtd = dot(g, d);
  let step = ctx.lr;
  let evaluations = p;
  switch (recipe.lineSearch) {
    case 'none':
      break;
    case 'strong-wolfe': {
      if (gtd < 0) {
        const phi = lineFunctionWithSlope(ctx.objective, w, d, ctx.work.vector('ls.point'), ctx.work.vector('ls.grad'), ctx.rows);
        const r = strongWolfe(phi, ctx.loss, gtd, ctx.lr, { c1: 1e-4, c2: 0.9 });
        step = r.step;
        evaluations += r.evaluations;
      } else {
        step = 0;
      }
      break;
    }
    case 'brent': {
      const r = minimizeAlong(ctx.objective, w, d, { method: 'brent', initialStep: ctx.lr, rows: ctx.rows, scratch: { point: ctx.work.vector('ls.point'), grad: ctx.work.vector('ls.grad') } });
      step = r.value <= ctx.loss ? r.step : 0;
      evaluations += r.evaluations;
      break;
    }
    default: {
      const never: never = recipe.lineSearch;
      throw new Error(`unknown lineSearch '${String(never)}'`);
    }
  }
  state.t += 1;
  scalars.stepLength = step;
  for (let i = 0; i < p; i++) out[i] = -d[i];
  ctx.extraEvaluations += evaluations;
  return step;
}

/** Damped Newton: exact Hessian from P Hessian-vector products (Pearlmutter 1994). */
export const newton: OptimizerFamily = {
  firstOrder: false,
  decoupledDecay: false,
  init: (p: number, recipe: Recipe) => initNewton('newton', p, recipe),
  update: (g, s, w, ctx, out) => updateNewton(false, g, s, w, ctx, out)
};

/** Damped Gauss-Newton (Levenberg–Marquardt direction): G = JᵀH_out·J from P products. */
export const gaussNewton: OptimizerFamily = {
  firstOrder: false,
  decoupledDecay: false,
  init: (p: number, recipe: Recipe) => initNewton('gauss-newton', p, recipe),
  update: (g, s, w, ctx, out) => updateNewton(true, g, s, w, ctx, out)
};
