/**
 * Adagrad as torch.optim.Adagrad (lr_decay 0, initial accumulator 0):
 * s ← s + g²;  w ← w − η·g / (√s + ε)  (Duchi, Hazan & Singer, JMLR 2011).
 */
import type { OptimizerState } from '../state';
import { buffer, type OptimizerContext, type OptimizerFamily } from './types';

/** Adagrad (Duchi et al. 2011), PyTorch conventions (ε added after the square root). */
export const adagrad: OptimizerFamily = {
  firstOrder: true,
  decoupledDecay: false,
  init(parameterCount: number): OptimizerState {
    return { kind: 'adagrad', t: 0, buffers: { sum: new Float64Array(parameterCount) }, scalars: {} };
  },
  update(grad: Float64Array, state: OptimizerState, _params: Float64Array, ctx: OptimizerContext, out: Float64Array): number {
    const s = buffer(state, 'sum');
    const eps = ctx.recipe.eps;
    for (let i = 0; i < grad.length; i++) {
      s[i] += grad[i] * grad[i];
      out[i] = grad[i] / (Math.sqrt(s[i]) + eps);
    }
    state.t += 1;
    return ctx.lr;
  }
};
