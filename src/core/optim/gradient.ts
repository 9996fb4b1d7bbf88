/**
 * Gradient transforms applied by the session before an optimizer sees the gradient, in the
 * order PyTorch users apply them: clip the global norm first (torch.nn.utils.clip_grad_norm_),
 * then add coupled weight decay λ·w (what torch.optim.SGD/Adam/… do with `weight_decay`).
 */
import { norm2, type ParamBlock } from '../objective';

/**
 * Scales g in place so that ‖g‖₂ ≤ maxNorm (g ← g·maxNorm/‖g‖ when larger; torch's
 * clip_grad_norm_ uses maxNorm/(‖g‖ + 1e-6), we use the exact ratio). Returns ‖g‖ before clipping.
 * `maxNorm` 0 disables clipping.
 */
export function clipByGlobalNorm(g: Float64Array, maxNorm: number): number {
  const n = norm2(g);
  if (maxNorm > 0 && n > maxNorm) {
    const s = maxNorm / n;
    for (let i = 0; i < g.length; i++) g[i] *= s;
  }
  return n;
}

/** g ← g + λ·w (coupled L2 weight decay as torch adds it to the gradient). */
export function addWeightDecay(g: Float64Array, w: Float64Array, lambda: number): void {
  if (lambda === 0) return;
  for (let i = 0; i < g.length; i++) g[i] += lambda * w[i];
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
