/**
 * Adam, AMSGrad and AdamW as torch.optim.Adam / AdamW (Kingma & Ba, ICLR 2015; Reddi, Kale &
 * Kumar, ICLR 2018; Loshchilov & Hutter, ICLR 2019):
 *
 *   m ← β1·m + (1 − β1)·g;  v ← β2·v + (1 − β2)·g²;  c1 = 1 − β1ᵗ, c2 = 1 − β2ᵗ;
 *   AMSGrad: v̂ ← max(v̂, v) and v̂ replaces v below (PyTorch bias-corrects the maximum too);
 *   w ← w − (η / c1) · m / (√v / √c2 + ε);
 *   AdamW first decays w ← w − ηλ·w (decoupled), folded here into the same displacement.
 */
import type { OptimizerName, Recipe } from '../setup';
import type { OptimizerState } from '../state';
import { powInt } from './powers';
import { ADAM_STATE, required, stateOf } from './layout';
import type { OptimizerContext, OptimizerFamily } from './types';

function initAdam(kind: OptimizerName, parameterCount: number, recipe: Recipe): OptimizerState {
  const buffers: Record<string, Float64Array> = { m: new Float64Array(parameterCount), v: new Float64Array(parameterCount) };
  if (recipe.amsgrad) buffers.vMax = new Float64Array(parameterCount);
  return { kind, t: 0, buffers, scalars: {} };
}

function updateAdam(decoupled: boolean, grad: Float64Array, state: OptimizerState, params: Float64Array, ctx: OptimizerContext, out: Float64Array): number {
  const { beta1, beta2, eps, amsgrad, weightDecay } = ctx.recipe;
  const mask = ctx.decayMask;
  const { m, v, vMax: max } = stateOf(ADAM_STATE, state).buffers;
  const vMax = amsgrad ? required(max, state.kind, 'vMax') : null;
  state.t += 1;
  const c1 = 1 - powInt(beta1, state.t);
  const c2Sqrt = Math.sqrt(1 - powInt(beta2, state.t));
  // Displacement −(η/c1)·u, so the decoupled term ηλw enters u as λ·c1·w.
  const decay = decoupled ? weightDecay * c1 : 0;
  for (let i = 0; i < grad.length; i++) {
    const g = grad[i];
    m[i] = beta1 * m[i] + (1 - beta1) * g;
    v[i] = beta2 * v[i] + (1 - beta2) * (g * g);
    let second = v[i];
    if (vMax !== null) {
      if (v[i] > vMax[i]) vMax[i] = v[i];
      second = vMax[i];
    }
    const u = m[i] / (Math.sqrt(second) / c2Sqrt + eps);
    out[i] = decay === 0 || (mask !== null && mask[i] === 0) ? u : u + decay * params[i];
  }
  return ctx.lr / c1;
}

/** Adam / AMSGrad with weight decay added to the gradient (torch.optim.Adam). */
export const adam: OptimizerFamily = {
  firstOrder: true,
  decoupledDecay: false,
  init: (p: number, recipe: Recipe) => initAdam('adam', p, recipe),
  update: (g, s, w, ctx, out) => updateAdam(false, g, s, w, ctx, out)
};

/** AdamW: decoupled weight decay w ← w − ηλw before the Adam step (torch.optim.AdamW). */
export const adamw: OptimizerFamily = {
  firstOrder: true,
  decoupledDecay: true,
  init: (p: number, recipe: Recipe) => initAdam('adamw', p, recipe),
  update: (g, s, w, ctx, out) => updateAdam(true, g, s, w, ctx, out)
};
