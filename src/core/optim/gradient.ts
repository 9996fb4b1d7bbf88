/**
 * Gradient transforms chained in front of an optimizer (optax's `chain`), in the order PyTorch
 * users apply them: clamp entries (torch.nn.utils.clip_grad_value_), clip the global norm
 * (torch.nn.utils.clip_grad_norm_), then add coupled weight decay λ·w (what torch.optim.SGD /
 * Adam / … do with `weight_decay`), on every parameter or, with `decayBiases: false`, on weight
 * matrices only (the usual "no decay on biases" parameter groups). All are stateless.
 */
import { norm2, type ParamBlock } from '../objective';
import type { Recipe } from '../setup';

/** torch.nn.utils.clip_grad_norm_ adds this to the norm before dividing (PyTorch 1.13 and 2.x). */
export const CLIP_NORM_OFFSET = 1e-6;

/**
 * Scales g in place by maxNorm/(‖g‖ + 1e-6) when that ratio is below 1, exactly as
 * torch.nn.utils.clip_grad_norm_ (source: PyTorch 1.13, torch/nn/utils/clip_grad.py). Returns ‖g‖
 * before clipping. `maxNorm` 0 disables clipping.
 */
export function clipByGlobalNorm(g: Float64Array, maxNorm: number): number {
  const n = norm2(g);
  if (maxNorm > 0) {
    const coef = maxNorm / (n + CLIP_NORM_OFFSET);
    if (coef < 1) for (let i = 0; i < g.length; i++) g[i] *= coef;
  }
  return n;
}

/** Clamps every entry of g to [−c, c] in place (torch.nn.utils.clip_grad_value_); c = 0 disables. */
export function clipByValue(g: Float64Array, c: number): void {
  if (!(c > 0)) return;
  for (let i = 0; i < g.length; i++) {
    if (g[i] > c) g[i] = c;
    else if (g[i] < -c) g[i] = -c;
  }
}

/**
 * g ← g + λ·w (coupled L2 weight decay as torch adds it to the gradient), on every entry or,
 * with a mask, on the entries where mask is 1.
 */
export function addWeightDecay(g: Float64Array, w: Float64Array, lambda: number, mask: Uint8Array | null = null): void {
  if (lambda === 0) return;
  if (mask === null) for (let i = 0; i < g.length; i++) g[i] += lambda * w[i];
  else for (let i = 0; i < g.length; i++) if (mask[i] === 1) g[i] += lambda * w[i];
}

/**
 * Which entries weight decay applies to: null (all) unless the recipe excludes biases, then 1 on
 * weight and analytic-parameter blocks and 0 on bias blocks.
 */
export function decayMask(blocks: readonly ParamBlock[], parameterCount: number, recipe: Pick<Recipe, 'decayBiases'>): Uint8Array | null {
  if (recipe.decayBiases) return null;
  const m = new Uint8Array(parameterCount).fill(1);
  for (const b of blocks) if (b.kind === 'bias') m.fill(0, b.offset, b.offset + b.size);
  return m;
}

/**
 * Per-parameter learning-rate multipliers from per-layer `lrScale` entries (index = layer of
 * each block). Returns null when every multiplier is 1, so the hot path skips the product.
 */
export function layerScales(blocks: readonly ParamBlock[], parameterCount: number, layers: readonly { lrScale: number }[]): Float64Array | null {
  if (layers.every((l) => l.lrScale === 1)) return null;
  const s = new Float64Array(parameterCount).fill(1);
  for (const b of blocks) {
    if (b.layer < 0 || b.layer >= layers.length) continue;
    s.fill(layers[b.layer].lrScale, b.offset, b.offset + b.size);
  }
  return s;
}

/** One stateless gradient transform of the chain. */
export interface GradientTransform {
  readonly name: 'clip-value' | 'clip-norm' | 'weight-decay';
  /** Transforms g in place; w are the current parameters. */
  apply(g: Float64Array, w: Float64Array): void;
}

/**
 * The transforms a first-order family gets, in order (clipping only for first-order families;
 * coupled decay unless the family decays itself). Empty transforms are left out.
 */
export function gradientChain(recipe: Recipe, blocks: readonly ParamBlock[], parameterCount: number, family: { firstOrder: boolean; decoupledDecay: boolean }): GradientTransform[] {
  const chain: GradientTransform[] = [];
  if (family.firstOrder && recipe.clipValue > 0) chain.push({ name: 'clip-value', apply: (g) => clipByValue(g, recipe.clipValue) });
  if (family.firstOrder && recipe.clipNorm > 0) chain.push({ name: 'clip-norm', apply: (g) => void clipByGlobalNorm(g, recipe.clipNorm) });
  if (!family.decoupledDecay && recipe.weightDecay !== 0) {
    const mask = decayMask(blocks, parameterCount, recipe);
    chain.push({ name: 'weight-decay', apply: (g, w) => addWeightDecay(g, w, recipe.weightDecay, mask) });
  }
  return chain;
}
