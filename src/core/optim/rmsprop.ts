/**
 * RMSProp as torch.optim.RMSprop (Tieleman & Hinton 2012; centered variant Graves 2013):
 *
 *   a ← α·a + (1 − α)·g²;  centered: m ← α·m + (1 − α)·g, d = √(a − m²) + ε; else d = √a + ε;
 *   momentum μ > 0: b ← μ·b + g/d, w ← w − η·b;  otherwise w ← w − η·g/d.
 */
import type { Recipe } from '../setup';
import type { OptimizerState } from '../state';
import { required, RMSPROP_STATE, stateOf } from './layout';
import type { OptimizerContext, OptimizerFamily } from './types';

/** RMSProp: plain, centered and with momentum, PyTorch conventions. */
export const rmsprop: OptimizerFamily = {
  firstOrder: true,
  decoupledDecay: false,
  init(parameterCount: number, recipe: Recipe): OptimizerState {
    const buffers: Record<string, Float64Array> = { squareAvg: new Float64Array(parameterCount) };
    if (recipe.centered) buffers.gradAvg = new Float64Array(parameterCount);
    if (recipe.momentum > 0) buffers.momentum = new Float64Array(parameterCount);
    return { kind: 'rmsprop', t: 0, buffers, scalars: {} };
  },
  update(grad: Float64Array, state: OptimizerState, _params: Float64Array, ctx: OptimizerContext, out: Float64Array): number {
    const { alpha, eps, momentum, centered } = ctx.recipe;
    const { buffers } = stateOf(RMSPROP_STATE, state);
    const a = buffers.squareAvg;
    const m = centered ? required(buffers.gradAvg, state.kind, 'gradAvg') : null;
    const b = momentum > 0 ? required(buffers.momentum, state.kind, 'momentum') : null;
    for (let i = 0; i < grad.length; i++) {
      const g = grad[i];
      a[i] = alpha * a[i] + (1 - alpha) * (g * g);
      let d: number;
      if (m !== null) {
        m[i] = alpha * m[i] + (1 - alpha) * g;
        d = Math.sqrt(a[i] - m[i] * m[i]) + eps;
      } else {
        d = Math.sqrt(a[i]) + eps;
      }
      if (b !== null) {
        b[i] = momentum * b[i] + g / d;
        out[i] = b[i];
      } else {
        out[i] = g / d;
      }
    }
    state.t += 1;
    return ctx.lr;
  }
};
