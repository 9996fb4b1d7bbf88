/**
 * Proposals shared by several rules. A proposal is complete enough to work when tried: every key
 * it needs is set (a new learning rate goes with standardized inputs; a switch of optimizer clears
 * momentum that the new optimizer would refuse), and numbers are rounded *down* to three
 * significant digits so a limit is never exceeded by rounding.
 */
import type { ActivationName } from '../../setup';
import type { Proposal, ProposalValue } from './types';
import type { Evidence, SharpnessPoint } from './evidence';
import { THRESHOLDS } from './thresholds';
import { ruleScheme } from '../init-check';

/** x rounded down to `digits` significant digits (x > 0). */
export function roundDown(x: number, digits = 3): number {
  if (!(x > 0) || !Number.isFinite(x)) return x;
  const p = Math.pow(10, Math.floor(Math.log10(x)) - (digits - 1));
  const down = Math.floor(x / p + 1e-9) * p;
  return Number(down.toPrecision(digits));
}

/** x rounded to `digits` significant digits. */
export function roundTo(x: number, digits = 3): number {
  return Number.isFinite(x) && x !== 0 ? Number(x.toPrecision(digits)) : x;
}

/** The activation that decides a network-wide init proposal: the most common among hidden layers (else the only layer's). */
export function governingActivation(e: Evidence): ActivationName | null {
  const layers = e.setup.layers;
  if (layers.length === 0) return null;
  const hidden = layers.length > 1 ? layers.slice(0, -1) : layers;
  const counts = new Map<ActivationName, number>();
  for (const l of hidden) counts.set(l.activation, (counts.get(l.activation) ?? 0) + 1);
  let best: ActivationName = hidden[0].activation;
  for (const [a, c] of counts) if (c > (counts.get(best) ?? 0)) best = a;
  return best;
}

/**
 * The fan-in scheme for the network's activations at gain 1, from step 0; null when the weights
 * are explicit (init keys would not apply) or the recipe already uses exactly that.
 */
export function initProposal(e: Evidence): Proposal | null {
  const act = governingActivation(e);
  if (act === null || e.setup.explicitWeights) return null;
  const scheme = ruleScheme(act);
  if (scheme === e.setup.init && e.setup.gain === 1) return null;
  return { atStep: 0, set: { 'model.init': scheme, 'model.gain': 1 } };
}

/** `data.standardize: true` with lr fitted to the standardized setup's limit at step 0 (lr left alone when no limit was measured or applies). */
export function standardizeProposal(e: Evidence): Proposal | null {
  if (e.setup.standardized || e.setup.model !== 'network') return null;
  const set: Record<string, ProposalValue> = { 'data.standardize': true };
  const fit = e.standardized;
  if (fit && fit.largestStableLr !== null && Number.isFinite(fit.largestStableLr) && fit.largestStableLr > 0) {
    set.lr = roundDown(THRESHOLDS.fittedLrFraction.value * fit.largestStableLr);
  }
  return { atStep: 0, set };
}

/** Measured points with a finite limit, step-ascending. */
export function limitedPoints(e: Evidence): SharpnessPoint[] {
  return (e.sharpness ?? []).filter((p) => p.largestStableLr !== null && Number.isFinite(p.largestStableLr) && p.largestStableLr > 0).sort((a, b) => a.step - b.step);
}

/**
 * lr = fraction × the limit measured at `at`, branching at `atStep`. The recipe's `lr` is the
 * base rate; warm-up and the schedules only scale it down (factors ≤ 1), so the rate in effect
 * stays below the limit at every step.
 */
export function lrProposal(at: SharpnessPoint, atStep: number, fraction: number): Proposal {
  return { atStep, set: { lr: roundDown(fraction * (at.largestStableLr as number)) } };
}

/** True when the inputs fail the scale checks (the `inputs-unscaled` conditions). */
export function inputsUnscaled(e: Evidence): boolean {
  const d = e.data;
  if (!d || d.standardized) return false;
  return (d.spreadRatio !== null && d.spreadRatio > THRESHOLDS.inputSpreadRatio.value) || (d.largestOffset !== null && d.largestOffset.ratio > THRESHOLDS.inputOffsetRatio.value);
}

/** True when the chosen initialization is off the fan-in rule in some layer (the `init-scale` condition). */
export function initOffRule(e: Evidence): boolean {
  const f = THRESHOLDS.initSpreadFactor.value;
  return e.init?.chosen.layers.some((l) => l.ratio > f || l.ratio < 1 / f) ?? false;
}

/** Whether the optimizer takes per-layer learning-rate multipliers and a learning rate with a stability limit. */
export function firstOrder(e: Evidence): boolean {
  switch (e.setup.optimizer) {
    case 'sgd':
    case 'adagrad':
    case 'rmsprop':
    case 'adam':
    case 'adamw':
      return true;
    case 'lbfgs':
    case 'cg':
    case 'newton':
    case 'gauss-newton':
    case 'minibatch-lbfgs':
      return false;
    default: {
      const never: never = e.setup.optimizer;
      throw new Error(`unknown optimizer '${String(never)}'`);
    }
  }
}
