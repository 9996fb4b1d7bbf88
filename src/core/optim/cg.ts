/**
 * Nonlinear conjugate gradients (Nocedal & Wright 2006, §5.2): d ← −g + β·d_prev with
 *   Fletcher–Reeves  β = gᵀg / g_prevᵀg_prev                      (N&W eq. 5.41a)
 *   Polak–Ribière+   β = max(0, gᵀ(g − g_prev) / g_prevᵀg_prev)   (N&W eq. 5.44–5.45)
 * restarted with d = −g every P iterations (P = parameter count) and whenever d is not a
 * descent direction. Step length by the recipe's line search: strong Wolfe with c2 = 0.1
 * (N&W §5.2 recommend c2 < ½ for CG; Fletcher–Reeves needs it), Brent, or a fixed `lr`.
 * Initial trial: min(1, 1/‖g‖₁)·lr after a restart, else α_prev·g_prevᵀd_prev / gᵀd (N&W eq. 3.60).
 *
 * State: buffers `prevGrad`, `dir`; scalars `sinceRestart`, `stepLength`, `prevSlope`, `prevGG`.
 */
import { dot } from '../objective';
import type { Recipe } from '../setup';
import type { OptimizerState } from '../state';
import { lineFunctionWithSlope, minimizeAlong } from './linesearch/along';
import { strongWolfe } from './linesearch/wolfe';
import { CG_STATE, stateOf } from './layout';
import type { OptimizerContext, OptimizerFamily } from './types';

/** Nonlinear CG family (Fletcher–Reeves 1964; Polak–Ribière 1969 with the + truncation). */
export const cg: OptimizerFamily = {
  firstOrder: false,
  decoupledDecay: false,
  init(parameterCount: number): OptimizerState {
    return {
      kind: 'cg',
      t: 0,
      buffers: { prevGrad: new Float64Array(parameterCount), dir: new Float64Array(parameterCount) },
      scalars: { sinceRestart: 0, stepLength: 0, prevSlope: 0, prevGG: 0 }
    };
  },
  update(g: Float64Array, state: OptimizerState, w: Float64Array, ctx: OptimizerContext, out: Float64Array): number {
    const p = g.length;
    const recipe: Recipe = ctx.recipe;
    const typed = stateOf(CG_STATE, state);
    const d = typed.buffers.dir;
    const prev = typed.buffers.prevGrad;
    const sc = typed.scalars;
    const gg = dot(g, g);
    let g1 = 0;
    for (let i = 0; i < p; i++) g1 += Math.abs(g[i]);
    if (gg === 0 || !Number.isFinite(gg) || !Number.isFinite(ctx.loss)) {
      out.fill(0);
      return 0;
    }
    let restart = state.t === 0 || sc.sinceRestart >= p || sc.prevGG === 0;
    if (!restart) {
      let beta: number;
      if (recipe.cgVariant === 'fletcher-reeves') {
        beta = gg / sc.prevGG;
      } else {
        let gy = 0;
        for (let i = 0; i < p; i++) gy += g[i] * (g[i] - prev[i]);
        beta = Math.max(0, gy / sc.prevGG);
      }
      for (let i = 0; i < p; i++) d[i] = -g[i] + beta * d[i];
      if (dot(g, d) >= 0) restart = true;
    }
    if (restart) {
      for (let i = 0; i < p; i++) d[i] = -g[i];
      sc.sinceRestart = 0;
    }
    const gtd = dot(g, d);
    let t0 = restart ? Math.min(1, 1 / g1) * ctx.lr : (sc.stepLength * sc.prevSlope) / gtd;
    if (!(t0 > 0) || !Number.isFinite(t0)) t0 = Math.min(1, 1 / g1) * ctx.lr;
    let step = t0;
    let evaluations = 0;
    switch (recipe.lineSearch) {
      case 'none':
        step = ctx.lr;
        break;
      case 'strong-wolfe': {
        let dmax = 0;
        for (let i = 0; i < p; i++) dmax = Math.max(dmax, Math.abs(d[i]));
        const phi = lineFunctionWithSlope(ctx.objective, w, d, ctx.work.vector('ls.point'), ctx.work.vector('ls.grad'), ctx.rows);
        const r = strongWolfe(phi, ctx.loss, gtd, t0, { c1: 1e-4, c2: 0.1, maxEvaluations: 25, minWidth: 1e-9 / dmax });
        step = r.step;
        evaluations = r.evaluations;
        break;
      }
      case 'brent': {
        const r = minimizeAlong(ctx.objective, w, d, { method: 'brent', initialStep: t0, rows: ctx.rows, scratch: { point: ctx.work.vector('ls.point'), grad: ctx.work.vector('ls.grad') } });
        step = r.value <= ctx.loss ? r.step : 0;
        evaluations = r.evaluations;
        break;
      }
      default: {
        const never: never = recipe.lineSearch;
        throw new Error(`unknown lineSearch '${String(never)}'`);
      }
    }
    prev.set(g);
    sc.prevGG = gg;
    sc.prevSlope = gtd;
    sc.stepLength = step;
    // no acceptable step: force a restart along −g next time (FR would otherwise repeat d)
    sc.sinceRestart = step === 0 ? p : sc.sinceRestart + 1;
    state.t += 1;
    for (let i = 0; i < p; i++) out[i] = -d[i];
    ctx.extraEvaluations += evaluations;
    return step;
  }
};
