/**
 * Adagrad as torch.optim.Adagrad (Duchi, Hazan & Singer, JMLR 2011):
 *   s₀ = initialAccumulator;  s ← s + g²;  w ← w − η_t·g / (√s + ε),  η_t = η / (1 + (t − 1)·lrDecay)
 * at update t = 1, 2, … (torch's lr_decay and initial_accumulator_value).
 */
import type { Recipe } from '../setup';
import type { OptimizerState } from '../state';
import { ADAGRAD_STATE, stateOf } from './layout';
import type { OptimizerContext, OptimizerFamily } from './types';

/** Adagrad (Duchi et al. 2011), PyTorch conventions (ε added after the square root). */
export const adagrad: OptimizerFamily = {
  firstOrder: true,
  decoupledDecay: false,
  init(parameterCount: number, recipe: Recipe): OptimizerState {
    const sum = new Float64Array(parameterCount);
    if (recipe.initialAccumulator !== 0) sum.fill(recipe.initialAccumulator);
    return { kind: 'adagrad', t: 0, buffers: { sum }, scalars: {} };
  },
  update(grad: Float64Array, state: OptimizerState, _params: Float64Array, ctx: OptimizerContext, out: Float64Array): number {
    const s = stateOf(ADAGRAD_STATE, state).buffers.sum;
    const eps = ctx.recipe.eps;
    for (let i = 0; i < grad.length; i++) {
      s[i] += grad[i] * grad[i];
      out[i] = grad[i] / (Math.sqrt(s[i]) + eps);
    }
    state.t += 1;
    const decay = ctx.recipe.lrDecay;
    return decay === 0 ? ctx.lr : ctx.lr / (1 + (state.t - 1) * decay);
  }
};
