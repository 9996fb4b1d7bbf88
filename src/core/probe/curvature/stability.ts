/**
 * Largest stable learning rate of a recipe on the local quadratic model of the loss.
 *
 * On f(w) ≈ ½ wᵀA w, each eigen-direction of A (eigenvalue λ > 0) evolves independently, so an
 * optimizer is stable iff its scalar recursion is stable for λ = λmax. With c = η·λ:
 *
 * - gradient descent, w ← w − ηg: |1 − c| < 1  ⇔  η < 2/λ
 *   (common practice; Nocedal & Wright, *Numerical Optimization*, 2nd ed., ch. 3);
 * - heavy ball (PyTorch form v ← μv + g, w ← w − ηv): z² − (1 + μ − c)z + μ = 0 has both roots
 *   inside the unit circle iff 0 < c < 2(1 + μ)  ⇔  η < 2(1 + μ)/λ (Polyak 1964);
 * - Nesterov (PyTorch form v ← μv + g, w ← w − η(g + μv)): z² − (1 + μ)(1 − c)z + μ(1 − c) = 0;
 *   the Schur–Cohn conditions |b| < 1 + c₀, |c₀| < 1 give 0 < c < 2(1 + μ)/(1 + 2μ)
 *   (derived here; checked numerically in the tests);
 * - Adam/AdamW with the preconditioner P = √v̂ + ε frozen: with v = m/(1 − β1) the update is heavy
 *   ball with step η(1 − β1) on P^{-1/2} A P^{-1/2}, so η < 2(1 + β1)/((1 − β1)·λ̃), λ̃ the
 *   preconditioned sharpness (38/λ̃ at β1 = 0.9; the same threshold as reported by Cohen et al.,
 *   "Adaptive gradient methods at the edge of stability", 2022 — from memory). Bias correction
 *   is ignored (valid once β1ᵗ ≪ 1);
 * - RMSProp (momentum μ: heavy ball on the preconditioned matrix) and Adagrad: 2(1 + μ)/λ̃, 2/λ̃.
 *
 * L2 weight decay added to the gradient shifts A by +wd·I; per-layer learning-rate multipliers
 * scale the step per coordinate like a preconditioner. Both are folded into the operator whose
 * sharpness is measured ({@link stepMetric}).
 */
import type { ParamBlock } from '../../objective';
import type { OptimizerName, Recipe } from '../../setup';
import type { OptimizerState } from '../../state';
import { powInt } from '../../optim/powers';

/** Which scalar recursion the bound comes from. */
export type StabilityRule = 'gradient-descent' | 'heavy-ball' | 'nesterov' | 'adam-frozen' | 'preconditioned-frozen' | 'preconditioned-heavy-ball-frozen' | 'not-applicable';

/** The factor c_max with largest stable η = c_max / λ, and how it was derived. */
export interface StabilityFactor {
  readonly rule: StabilityRule;
  /** c_max, or null when the optimizer chooses its own step (line search, Newton). */
  readonly factor: number | null;
  /** Human formula, e.g. `2(1+μ)/λmax`. */
  readonly formula: string;
  /** Whether the bound applies to the preconditioned matrix P^{-1/2} A P^{-1/2}. */
  readonly preconditioned: boolean;
  /** Caveats to show beside the number. */
  readonly note: string;
}

/** The stability factor of a recipe (see the module comment for every formula's source). */
export function stabilityFactor(recipe: Recipe): StabilityFactor {
  const mu = recipe.momentum;
  const opt: OptimizerName = recipe.optimizer;
  switch (opt) {
    case 'sgd':
      if (mu === 0) return { rule: 'gradient-descent', factor: 2, formula: '2/λmax', preconditioned: false, note: 'gradient descent on the local quadratic model' };
      if (recipe.nesterov) {
        return { rule: 'nesterov', factor: (2 * (1 + mu)) / (1 + 2 * mu), formula: '2(1+μ)/((1+2μ)·λmax)', preconditioned: false, note: 'Nesterov momentum (PyTorch form) on the local quadratic model' };
      }
      return { rule: 'heavy-ball', factor: 2 * (1 + mu), formula: '2(1+μ)/λmax', preconditioned: false, note: 'heavy-ball momentum (Polyak 1964) on the local quadratic model' };
    case 'adam':
    case 'adamw': {
      const b1 = recipe.beta1;
      return {
        rule: 'adam-frozen',
        factor: (2 * (1 + b1)) / (1 - b1),
        formula: '2(1+β1)/((1−β1)·λmax(P^-1/2 H P^-1/2))',
        preconditioned: true,
        note: `frozen-preconditioner approximation: P = √v̂ + ε held fixed, bias correction ignored${opt === 'adamw' ? ', decoupled weight decay ignored' : ''}`,
      };
    }
    case 'rmsprop':
      if (mu > 0) {
        return { rule: 'preconditioned-heavy-ball-frozen', factor: 2 * (1 + mu), formula: '2(1+μ)/λmax(P^-1/2 H P^-1/2)', preconditioned: true, note: 'frozen-preconditioner approximation: P = √a + ε held fixed' };
      }
      return { rule: 'preconditioned-frozen', factor: 2, formula: '2/λmax(P^-1/2 H P^-1/2)', preconditioned: true, note: 'frozen-preconditioner approximation: P = √a + ε held fixed' };
    case 'adagrad':
      return { rule: 'preconditioned-frozen', factor: 2, formula: '2/λmax(P^-1/2 H P^-1/2)', preconditioned: true, note: 'frozen-preconditioner approximation: P = √Σg² + ε held fixed (it only grows, so the limit only loosens)' };
    case 'lbfgs':
    case 'cg':
    case 'minibatch-lbfgs':
      return { rule: 'not-applicable', factor: null, formula: '—', preconditioned: false, note: `${opt} chooses its step by a line search; no fixed learning-rate limit applies` };
    case 'newton':
    case 'gauss-newton':
      return { rule: 'not-applicable', factor: null, formula: '—', preconditioned: false, note: `${opt} scales its step by the inverse curvature; no fixed learning-rate limit applies` };
    default: {
      const never: never = opt;
      throw new Error(`unknown optimizer '${String(never)}'`);
    }
  }
}

/** The bound for one measured sharpness. */
export interface StabilityBound extends StabilityFactor {
  /** The sharpness λ the bound uses (preconditioned when `preconditioned`; shifts included). */
  readonly sharpness: number;
  /** Largest stable learning rate factor/λ (Infinity when λ ≤ 0; null when not applicable). */
  readonly largestStableLr: number | null;
  /** The learning rate in effect. */
  readonly lr: number;
  /** lr / largestStableLr: below 1 stable, above 1 unstable on the quadratic model (η·λmax/2 for plain GD). */
  readonly margin: number | null;
  /** The largest sharpness the learning rate in effect tolerates, factor/η (2/η for plain GD); null when no rule applies or η ≤ 0. */
  readonly sharpnessLimit: number | null;
}

/** Largest stable learning rate and margin for a recipe given the relevant sharpness (see module comment). */
export function stabilityBound(recipe: Recipe, sharpness: number, lr: number = recipe.lr): StabilityBound {
  const f = stabilityFactor(recipe);
  if (f.factor === null) return { ...f, sharpness, largestStableLr: null, lr, margin: null, sharpnessLimit: null };
  const sharpnessLimit = lr > 0 ? f.factor / lr : null;
  if (!(sharpness > 0)) {
    return { ...f, sharpness, largestStableLr: Infinity, lr, margin: 0, sharpnessLimit, note: `${f.note}; no positive curvature, so the quadratic model sets no limit` };
  }
  const largest = f.factor / sharpness;
  return { ...f, sharpness, largestStableLr: largest, lr, margin: lr / largest, sharpnessLimit };
}

/**
 * The diagonal preconditioner P (the per-coordinate denominator of the update) of an adaptive
 * optimizer's state, as the optimizers in `core/optim` define it: Adam √(v/(1−β2ᵗ)) + ε (AMSGrad:
 * the running maximum), RMSProp √a + ε (centered √(a − m²) + ε), Adagrad √Σg² + ε.
 *
 * @returns P, or null for non-adaptive optimizers and before the first update (t = 0).
 */
export function preconditionerDiagonal(recipe: Recipe, state: OptimizerState): Float64Array | null {
  if (state.t === 0) return null;
  const eps = recipe.eps;
  const get = (name: string): Float64Array => {
    const b = state.buffers[name];
    if (b === undefined) throw new Error(`optimizer state of '${state.kind}' has no buffer '${name}'`);
    return b;
  };
  switch (recipe.optimizer) {
    case 'adam':
    case 'adamw': {
      const v = recipe.amsgrad ? get('vMax') : get('v');
      const c2 = 1 - powInt(recipe.beta2, state.t);
      return Float64Array.from(v, (x) => Math.sqrt(x / c2) + eps);
    }
    case 'rmsprop': {
      const a = get('squareAvg');
      if (recipe.centered) {
        const m = get('gradAvg');
        return Float64Array.from(a, (x, i) => Math.sqrt(Math.max(0, x - m[i] * m[i])) + eps);
      }
      return Float64Array.from(a, (x) => Math.sqrt(x) + eps);
    }
    case 'adagrad':
      return Float64Array.from(get('sum'), (x) => Math.sqrt(x) + eps);
    default:
      return null;
  }
}

/** The operator whose sharpness limits the step: D^{1/2}(A + s·I)D^{1/2}. */
export interface StepMetric {
  /** Per-coordinate step scaling D (null when D = I). */
  readonly scaling: Float64Array | null;
  /** Shift s (L2 weight decay added to the gradient; 0 for decoupled decay). */
  readonly shift: number;
  /** What went into it, for the readout. */
  readonly description: string;
}

/**
 * D = (per-layer lr multipliers) ⊘ P and s = weight decay (when added to the gradient), so the
 * stability bound of {@link stabilityFactor} applies to λmax(D^{1/2}(A + sI)D^{1/2}).
 *
 * @param preconditioner - P from {@link preconditionerDiagonal} (adaptive optimizers), else null.
 */
export function stepMetric(recipe: Recipe, blocks: readonly ParamBlock[], preconditioner: Float64Array | null): StepMetric {
  const f = stabilityFactor(recipe);
  const parts: string[] = [];
  const p = blocks.reduce((s, b) => Math.max(s, b.offset + b.size), 0);
  let scaling: Float64Array | null = null;
  if (recipe.layers.some((l) => l.lrScale !== 1)) {
    scaling = new Float64Array(p).fill(1);
    for (const b of blocks) {
      const s = b.layer >= 0 && b.layer < recipe.layers.length ? recipe.layers[b.layer].lrScale : 1;
      scaling.fill(s, b.offset, b.offset + b.size);
    }
    parts.push('per-layer lr multipliers');
  }
  if (f.preconditioned) {
    if (preconditioner === null) throw new Error(`${recipe.optimizer} needs its diagonal preconditioner (available after the first step) for the stability bound`);
    if (preconditioner.length !== p) throw new RangeError(`preconditioner has ${preconditioner.length} entries, expected ${p}`);
    const base = scaling ?? new Float64Array(p).fill(1);
    scaling = Float64Array.from(base, (s, i) => s / preconditioner[i]);
    parts.push('frozen diagonal preconditioner P^-1');
  }
  const decoupled = recipe.optimizer === 'adamw';
  const shift = f.factor !== null && !decoupled ? recipe.weightDecay : 0;
  if (shift !== 0) parts.push(`weight decay shift +${shift}`);
  return { scaling, shift, description: parts.length === 0 ? 'plain Hessian' : parts.join(', ') };
}
