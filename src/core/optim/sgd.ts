/**
 * Stochastic gradient descent with optional heavy-ball or Nesterov momentum, in PyTorch's
 * formulation (torch.optim.SGD):
 *
 *   first update v ← g, later v ← μ·v + (1 − d)·g (dampening d);
 *   plain momentum: w ← w − η·v;   Nesterov: w ← w − η·(g + μ·v).
 *
 * "First update" is t = 0 of the optimizer state, which is when torch's buffer is empty; a
 * branch that turns momentum on later starts from a zero buffer, so with d > 0 its first
 * velocity is (1 − d)·g where torch, starting afresh, would take g.
 *
 * Relation to the look-ahead form of Sutskever et al. (ICML 2013),
 * v′ ← μv′ − η∇f(w′ + μv′), w′ ← w′ + v′: with a constant η and v′ = −η·v, the PyTorch
 * iterate w equals the look-ahead point w′ + μv′, so both produce the same sequence of
 * gradient evaluation points (checked on a quadratic in test/unit/optim/nesterov.test.ts).
 * With a schedule the two differ slightly, because PyTorch's buffer is not scaled by η.
 */
import type { Recipe } from '../setup';
import type { OptimizerState } from '../state';
import { required, SGD_STATE, stateOf } from './layout';
import type { OptimizerContext, OptimizerFamily } from './types';

/** SGD / heavy-ball / Nesterov (torch.optim.SGD; Polyak 1964; Sutskever et al. 2013). */
export const sgd: OptimizerFamily = {
  firstOrder: true,
  decoupledDecay: false,
  init(parameterCount: number, recipe: Recipe): OptimizerState {
    const buffers: Record<string, Float64Array> = {};
    if (recipe.momentum !== 0) buffers.velocity = new Float64Array(parameterCount);
    return { kind: 'sgd', t: 0, buffers, scalars: {} };
  },
  update(grad: Float64Array, state: OptimizerState, _params: Float64Array, ctx: OptimizerContext, out: Float64Array): number {
    const mu = ctx.recipe.momentum;
    if (mu === 0) {
      out.set(grad);
    } else {
      const v = required(stateOf(SGD_STATE, state).buffers.velocity, state.kind, 'velocity');
      const damp = ctx.recipe.dampening;
      if (damp !== 0) {
        // torch: buf = g on the first update, then buf·μ + (1 − d)·g
        const keep = state.t === 0 ? 0 : mu;
        const take = state.t === 0 ? 1 : 1 - damp;
        for (let i = 0; i < grad.length; i++) {
          v[i] = keep * v[i] + take * grad[i];
          out[i] = ctx.recipe.nesterov ? grad[i] + mu * v[i] : v[i];
        }
      } else if (ctx.recipe.nesterov) {
        for (let i = 0; i < grad.length; i++) {
          v[i] = mu * v[i] + grad[i];
          out[i] = grad[i] + mu * v[i];
        }
      } else {
        for (let i = 0; i < grad.length; i++) {
          v[i] = mu * v[i] + grad[i];
          out[i] = v[i];
        }
      }
    }
    state.t += 1;
    return ctx.lr;
  }
};
