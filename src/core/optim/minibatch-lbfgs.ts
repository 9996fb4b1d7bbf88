/**
 * Mini-batch L-BFGS: on each step's mini-batch, a fresh L-BFGS solve (empty history) starts
 * from the current weights and runs at most `innerSteps` iterations with the recipe's line
 * search on that batch alone; the step's displacement is where the solve ended. (Common
 * practice for batch methods on sampled subsets; cf. Ngiam et al., ICML 2011.)
 * The inner solve stops early when max|g| ≤ 1e-7 or an iteration does not move.
 * Evaluations: every gradient and line-search evaluation of the inner solve.
 *
 * State: only the step counter; the inner history lives in scratch vectors and is discarded.
 */
import type { Recipe } from '../setup';
import type { OptimizerState } from '../state';
import { lbfgsIteration } from './lbfgs';
import type { OptimizerContext, OptimizerFamily } from './types';

/** Mini-batch L-BFGS family. */
export const minibatchLbfgs: OptimizerFamily = {
  firstOrder: false,
  decoupledDecay: false,
  init(_parameterCount: number, recipe: Recipe): OptimizerState {
    if (!Number.isInteger(recipe.innerSteps) || recipe.innerSteps < 1) throw new Error(`recipe.innerSteps must be a positive integer, got ${recipe.innerSteps}`);
    if (!Number.isInteger(recipe.history) || recipe.history < 1) throw new Error(`recipe.history must be a positive integer, got ${recipe.history}`);
    return { kind: 'minibatch-lbfgs', t: 0, buffers: {}, scalars: {} };
  },
  update(grad: Float64Array, state: OptimizerState, params: Float64Array, ctx: OptimizerContext, out: Float64Array): number {
    const p = grad.length;
    const m = ctx.recipe.history;
    const work = ctx.work;
    const inner = {
      kind: 'lbfgs',
      t: 0,
      buffers: {
        s: work.vector('mb.s', m * p),
        y: work.vector('mb.y', m * p),
        rho: work.vector('mb.rho', m),
        prevGrad: work.vector('mb.prevGrad'),
        dir: work.vector('mb.dir')
      },
      scalars: { count: 0, start: 0, hDiag: 1, stepLength: 0 }
    } satisfies OptimizerState;
    const x = work.vector('mb.x');
    const g = work.vector('mb.g');
    x.set(params);
    g.set(grad);
    let f = ctx.loss;
    let evaluations = 0;
    for (let k = 0; k < ctx.recipe.innerSteps; k++) {
      const r = lbfgsIteration(g, f, x, inner, ctx.recipe, ctx.lr, ctx);
      evaluations += r.evaluations;
      if (r.step === 0) break;
      const d = inner.buffers.dir;
      for (let i = 0; i < p; i++) x[i] += r.step * d[i];
      if (k + 1 < ctx.recipe.innerSteps) {
        f = ctx.objective.gradient(x, g, ctx.rows);
        evaluations += 1;
      }
    }
    for (let i = 0; i < p; i++) out[i] = params[i] - x[i];
    state.t += 1;
    ctx.extraEvaluations += evaluations;
    return 1;
  }
};
