/**
 * L-BFGS (Nocedal & Wright 2006, alg. 7.4 two-loop recursion and alg. 7.5), `maxIter`
 * iterations per session step (default 1), laid out to match torch.optim.LBFGS (PyTorch 1.13) —
 * one session step is one `LBFGS.step(closure)` with the same max_iter, max_eval,
 * tolerance_grad and tolerance_change:
 *
 *  - history pairs s = t·d, y = g − g_prev are stored only when yᵀs > 1e-10; the oldest pair
 *    is dropped beyond `history` pairs; initial inverse Hessian H0 = (yᵀs / yᵀy)·I (N&W eq. 7.20);
 *  - the first trial step is min(1, 1/‖g‖₁)·lr on the first iteration and lr afterwards;
 *  - `lineSearch`: 'strong-wolfe' (c1 = 1e-4, c2 = 0.9, at most maxEval minus the evaluations
 *    the step already made trials — torch ≥ 2.0's budget; torch 1.13 allowed 25), 'brent' (exact
 *    minimization along d, bracket from (0, trial)), or 'none' (fixed step = trial);
 *  - no update when max|g| ≤ toleranceGrad (default 1e-7);
 *  - with maxIter > 1, the iterations of one step stop, as torch's, after maxIter iterations,
 *    when the evaluations reach maxEval, when max|g| ≤ toleranceGrad, when max|t·d| ≤
 *    toleranceChange or when the loss changed by less than toleranceChange. The gradient at
 *    the accepted point is recomputed (same bits as the line search's; not counted, as torch
 *    takes it from the search).
 * When d is not a descent direction (gᵀd > −toleranceChange), or the line search along it ends
 * at step 0, the iteration stays in place, as torch's does — and, like torch, the next step
 * computes the same direction again: the run has stalled for good, which its trajectory shows
 * (flat from that step on). Clearing the history and retrying along −g would often get it going
 * again, but would no longer be torch's L-BFGS.
 *
 * State (all plain data): buffers `s`, `y` (history × P, ring buffer), `rho` (history),
 * `prevGrad`, `dir`; scalars `count`, `start` (ring head), `hDiag`, `stepLength`.
 */
import { dot } from '../objective';
import type { Recipe } from '../setup';
import type { OptimizerState } from '../state';
import { lineFunctionWithSlope, minimizeAlong } from './linesearch/along';
import { strongWolfe } from './linesearch/wolfe';
import { LBFGS_STATE, stateOf, type StateOf } from './layout';
import type { OptimizerContext, OptimizerFamily } from './types';

/** The L-BFGS state under its declared names. */
type LbfgsState = StateOf<typeof LBFGS_STATE>;

/** Curvature pairs with yᵀs at or below this are skipped (torch; keeps H positive definite). */
const MIN_CURVATURE = 1e-10;

/** A fresh L-BFGS state with `history` pairs of P entries. */
export function initLbfgs(kind: 'lbfgs' | 'minibatch-lbfgs', parameterCount: number, history: number): OptimizerState {
  if (!Number.isInteger(history) || history < 1) throw new Error(`recipe.history must be a positive integer, got ${history}`);
  return {
    kind,
    t: 0,
    buffers: {
      s: new Float64Array(history * parameterCount),
      y: new Float64Array(history * parameterCount),
      rho: new Float64Array(history),
      prevGrad: new Float64Array(parameterCount),
      dir: new Float64Array(parameterCount)
    },
    scalars: { count: 0, start: 0, hDiag: 1, stepLength: 0 }
  };
}

/** Clears the curvature history (the next direction is steepest descent). */
export function resetLbfgs(state: OptimizerState): void {
  const { scalars } = stateOf(LBFGS_STATE, state);
  state.t = 0;
  scalars.count = 0;
  scalars.start = 0;
  scalars.hDiag = 1;
  scalars.stepLength = 0;
}

/** Stores (s, y) = (t·d_prev, g − g_prev) when yᵀs > 1e-10 and refreshes H0 = yᵀs/yᵀy. */
function remember(g: Float64Array, state: LbfgsState, m: number, p: number): void {
  const { s: S, y: Y, rho, prevGrad: prev, dir: d } = state.buffers;
  const t = state.scalars.stepLength;
  let ys = 0;
  let yy = 0;
  for (let i = 0; i < p; i++) {
    const yi = g[i] - prev[i];
    ys += yi * (d[i] * t);
    yy += yi * yi;
  }
  if (!(ys > MIN_CURVATURE)) return;
  let count = state.scalars.count;
  let start = state.scalars.start;
  let slot: number;
  if (count === m) {
    slot = start;
    start = (start + 1) % m;
  } else {
    slot = (start + count) % m;
    count += 1;
  }
  const off = slot * p;
  for (let i = 0; i < p; i++) {
    Y[off + i] = g[i] - prev[i];
    S[off + i] = d[i] * t;
  }
  rho[slot] = 1 / ys;
  state.scalars.count = count;
  state.scalars.start = start;
  state.scalars.hDiag = ys / yy;
}

/** Two-loop recursion (N&W alg. 7.4): dir ← −H·g from the stored pairs. */
function twoLoop(g: Float64Array, state: LbfgsState, m: number, p: number, alpha: Float64Array): void {
  const { s: S, y: Y, rho, dir: d } = state.buffers;
  const { count, start, hDiag } = state.scalars;
  for (let i = 0; i < p; i++) d[i] = -g[i];
  for (let k = count - 1; k >= 0; k--) {
    const off = ((start + k) % m) * p;
    let sq = 0;
    for (let i = 0; i < p; i++) sq += S[off + i] * d[i];
    const a = sq * rho[(start + k) % m];
    alpha[k] = a;
    for (let i = 0; i < p; i++) d[i] += -a * Y[off + i];
  }
  for (let i = 0; i < p; i++) d[i] = d[i] * hDiag;
  for (let k = 0; k < count; k++) {
    const slot = (start + k) % m;
    const off = slot * p;
    let yr = 0;
    for (let i = 0; i < p; i++) yr += Y[off + i] * d[i];
    const coef = alpha[k] - yr * rho[slot];
    for (let i = 0; i < p; i++) d[i] += coef * S[off + i];
  }
}

/** Outcome of one L-BFGS iteration: the step length along `state.buffers.dir`. */
export interface LbfgsStep {
  step: number;
  evaluations: number;
}

/** The recipe's line search along d from w (value f, slope gtd < 0), first trial t0. */
function searchAlong(g: Float64Array, f: number, w: Float64Array, d: Float64Array, gtd: number, t0: number, recipe: Recipe, ctx: OptimizerContext, trials: number): LbfgsStep {
  const p = g.length;
  switch (recipe.lineSearch) {
    case 'none':
      return { step: t0, evaluations: 0 };
    case 'strong-wolfe': {
      let dmax = 0;
      for (let i = 0; i < p; i++) dmax = Math.max(dmax, Math.abs(d[i]));
      const phi = lineFunctionWithSlope(ctx.objective, w, d, ctx.work.vector('ls.point'), ctx.work.vector('ls.grad'), ctx.rows);
      const r = strongWolfe(phi, f, gtd, t0, { c1: 1e-4, c2: 0.9, maxEvaluations: trials, minWidth: recipe.toleranceChange / dmax });
      return { step: r.step, evaluations: r.evaluations };
    }
    case 'brent': {
      const r = minimizeAlong(ctx.objective, w, d, { method: 'brent', initialStep: t0, rows: ctx.rows, scratch: { point: ctx.work.vector('ls.point'), grad: ctx.work.vector('ls.grad') } });
      return { step: r.value <= f ? r.step : 0, evaluations: r.evaluations };
    }
    default: {
      const never: never = recipe.lineSearch;
      throw new Error(`unknown lineSearch '${String(never)}'`);
    }
  }
}

/**
 * One L-BFGS iteration at w with gradient g and value f: updates the memory, writes the
 * direction into `state.buffers.dir` and returns the step length t (0 = no move).
 */
export function lbfgsIteration(g: Float64Array, f: number, w: Float64Array, untyped: OptimizerState, recipe: Recipe, lr: number, ctx: OptimizerContext, trials = 25): LbfgsStep {
  const p = g.length;
  const m = recipe.history;
  let gmax = 0;
  let g1 = 0;
  for (let i = 0; i < p; i++) {
    const a = Math.abs(g[i]);
    if (a > gmax) gmax = a;
    g1 += a;
  }
  // converged (torch's tolerance_grad), or a non-finite value/gradient: stay in place
  if (gmax <= recipe.toleranceGrad || !Number.isFinite(g1) || !Number.isFinite(f)) return { step: 0, evaluations: 0 };
  const state = stateOf(LBFGS_STATE, untyped);
  state.t += 1;
  const d = state.buffers.dir;
  if (state.t === 1) {
    resetLbfgs(state);
    state.t = 1;
    for (let i = 0; i < p; i++) d[i] = -g[i];
  } else {
    remember(g, state, m, p);
    twoLoop(g, state, m, p, ctx.work.vector('lbfgs.alpha', m));
  }
  state.buffers.prevGrad.set(g);
  const t0 = state.t === 1 ? Math.min(1, 1 / g1) * lr : lr;
  const gtd = dot(g, d);
  if (gtd > -recipe.toleranceChange) {
    state.scalars.stepLength = 0;
    return { step: 0, evaluations: 0 };
  }
  const { step, evaluations } = searchAlong(g, f, w, d, gtd, t0, recipe, ctx, trials);
  state.scalars.stepLength = step;
  return { step, evaluations };
}

/**
 * L-BFGS, one iteration per step. Meant for full batch: with a mini-batch recipe each step
 * uses its own batch, so y = g_k − g_{k−1} mixes two batches and the curvature pairs are noise
 * (use 'minibatch-lbfgs', which solves each batch afresh, for that).
 */
export const lbfgs: OptimizerFamily = {
  firstOrder: false,
  decoupledDecay: false,
  init: (parameterCount: number, recipe: Recipe) => initLbfgs('lbfgs', parameterCount, recipe.history),
  update(grad: Float64Array, state: OptimizerState, params: Float64Array, ctx: OptimizerContext, out: Float64Array): number {
    if (ctx.recipe.maxIter > 1) return severalIterations(grad, state, params, ctx, out);
    const r = lbfgsIteration(grad, ctx.loss, params, state, ctx.recipe, ctx.lr, ctx, ctx.recipe.maxEval - 1);
    const d = stateOf(LBFGS_STATE, state).buffers.dir;
    if (r.step === 0) out.fill(0);
    else for (let i = 0; i < out.length; i++) out[i] = -d[i];
    ctx.extraEvaluations += r.evaluations;
    return r.step;
  }
};

function maxAbs(v: Float64Array, scale = 1): number {
  let m = 0;
  for (let i = 0; i < v.length; i++) m = Math.max(m, Math.abs(scale * v[i]));
  return m;
}

/**
 * Up to `maxIter` iterations from `params` on a scratch copy (torch's inner loop and stopping
 * rules, module comment); writes u = w₀ − w_end and returns step size 1, so Δw = w_end − w₀.
 */
function severalIterations(grad: Float64Array, state: OptimizerState, params: Float64Array, ctx: OptimizerContext, out: Float64Array): number {
  const recipe = ctx.recipe;
  const w = ctx.work.vector('lbfgs.w');
  const g = ctx.work.vector('lbfgs.g');
  w.set(params);
  g.set(grad);
  let f = ctx.loss;
  let evaluations = 1;
  for (let n = 1; n <= recipe.maxIter; n++) {
    const r = lbfgsIteration(g, f, w, state, recipe, ctx.lr, ctx, recipe.maxEval - evaluations);
    evaluations += r.evaluations;
    if (r.step === 0) break;
    const d = stateOf(LBFGS_STATE, state).buffers.dir;
    for (let i = 0; i < w.length; i++) w[i] += r.step * d[i];
    if (n === recipe.maxIter) break;
    const before = f;
    f = ctx.objective.gradient(w, g, ctx.rows);
    if (recipe.lineSearch === 'none') evaluations += 1;
    if (evaluations >= recipe.maxEval) break;
    if (maxAbs(g) <= recipe.toleranceGrad) break;
    if (maxAbs(d, r.step) <= recipe.toleranceChange) break;
    if (Math.abs(f - before) < recipe.toleranceChange) break;
  }
  ctx.extraEvaluations += evaluations - 1;
  for (let i = 0; i < out.length; i++) out[i] = params[i] - w[i];
  return 1;
}
