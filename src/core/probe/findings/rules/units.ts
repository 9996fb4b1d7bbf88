/** Rules on units and initialization: `saturated-units`, `dead-units`, `init-scale`. */
import type { Finding, Proposal, ProposalValue } from '../types';
import type { Evidence } from '../evidence';
import type { ActivationHealth, LayerActivationHealth } from '../../activation-health';
import { finding, fmt, pct, type Rule } from '../rule';
import { THRESHOLDS } from '../thresholds';
import { initOffRule, initProposal, inputsUnscaled, limitedPoints, lrProposal, standardizeProposal } from '../proposals';

/** Activation health at step 0: the evidence's own, else the init check's. */
export function healthAtStart(e: Evidence): ActivationHealth | undefined {
  return e.activationsStart ?? e.init?.health;
}

/**
 * What to change when units start saturated or dead: the fan-in scheme when the init is off its
 * rule, standardized inputs when those are unscaled (first layer) or the init already matches,
 * else the fan-in scheme if the recipe differs from it.
 */
export function startProposal(e: Evidence, layer: number): Proposal | null {
  if (initOffRule(e)) return initProposal(e);
  if (inputsUnscaled(e)) return standardizeProposal(e);
  return layer >= 0 ? initProposal(e) : null;
}

/** Layers over the threshold in `h`, and whether each was already over it at step 0. */
function over(h: ActivationHealth | undefined, share: (l: LayerActivationHealth) => number | null, thr: number): LayerActivationHealth[] {
  return h?.layers.filter((l) => {
    const s = share(l);
    return s !== null && s > thr;
  }) ?? [];
}

/**
 * `saturated-units`: the share of a tanh/sigmoid layer's pre-activations beyond the near-linear
 * zone exceeds 30%. At step 0 the proposal is the scheme/gain of the fan-in rule (or standardized
 * inputs when they are the cause); saturation that appears later gets no proposal.
 */
export const saturatedUnits: Rule = {
  id: 'saturated-units',
  measures: 'the share of a tanh or sigmoid layer\'s pre-activations beyond its near-linear zone (tanh |a| > 2, sigmoid |a| > 4)',
  thresholds: ['saturatedShare', 'tanhSaturation', 'sigmoidSaturation'],
  evaluate(e: Evidence): Finding[] {
    const thr = THRESHOLDS.saturatedShare.value;
    const start = healthAtStart(e);
    const atStart = over(start, (l) => l.saturatedShare, thr);
    const out: Finding[] = atStart.map((l) => finding('saturated-units', {
      severity: 'warning', layer: l.layer, step: 0, measured: l.saturatedShare as number, threshold: 'saturatedShare',
      statement: `At step 0, ${pct(l.saturatedShare as number)} of layer ${l.layer}'s ${l.activation} pre-activations lie beyond |a| = ${l.saturationThreshold} (spread ${fmt(l.preSpread)}), where the slope is below 7% of its peak.`,
      proposal: startProposal(e, l.layer),
    }));
    const now = e.activationsNow;
    if (now && now.step !== null && now.step > 0) {
      const known = new Set(atStart.map((l) => l.layer));
      for (const l of over(now, (x) => x.saturatedShare, thr)) {
        if (known.has(l.layer)) continue;
        out.push(finding('saturated-units', {
          severity: 'warning', layer: l.layer, step: now.step, measured: l.saturatedShare as number, threshold: 'saturatedShare',
          statement: `At step ${now.step}, ${pct(l.saturatedShare as number)} of layer ${l.layer}'s ${l.activation} pre-activations lie beyond |a| = ${l.saturationThreshold} (spread ${fmt(l.preSpread)}); they were not at step 0.`,
        }));
      }
    }
    return out;
  },
};

/** Zeroes the negative initial biases of dead units (explicit weights only). */
function biasProposal(e: Evidence, layer: number, units: readonly number[]): Proposal | null {
  if (!e.setup.explicitWeights || units.length === 0) return null;
  const set: Record<string, ProposalValue> = {};
  for (const u of units) set[`model.weights[${layer}].bias[${u}]`] = 0;
  return { atStep: 0, set };
}

/**
 * `dead-units`: the share of a ReLU-family layer's units inactive (a ≤ 0) on every row exceeds
 * 30%. At step 0: zero the dead units' biases when the weights are explicit, else standardized
 * inputs or the fan-in scheme; units that die later: the step-size proposal from step 0 when a
 * measured limit shows the rate was too large.
 */
export const deadUnits: Rule = {
  id: 'dead-units',
  measures: 'the share of a relu / leaky-relu layer\'s units whose pre-activation is ≤ 0 on every training row',
  thresholds: ['deadShare'],
  evaluate(e: Evidence): Finding[] {
    const thr = THRESHOLDS.deadShare.value;
    const start = healthAtStart(e);
    const atStart = over(start, (l) => l.deadShare, thr);
    const out: Finding[] = atStart.map((l) => finding('dead-units', {
      severity: 'warning', layer: l.layer, step: 0, measured: l.deadShare as number, threshold: 'deadShare',
      statement: `At step 0, ${pct(l.deadShare as number)} of layer ${l.layer}'s ${l.units} ${l.activation} units are inactive on every one of the ${l.rows} rows, so they pass no gradient.`,
      proposal: biasProposal(e, l.layer, l.deadUnits) ?? startProposal(e, l.layer),
    }));
    const now = e.activationsNow;
    if (now && now.step !== null && now.step > 0) {
      const known = new Set(atStart.map((l) => l.layer));
      const points = limitedPoints(e);
      const first = points[0];
      const unstable = points.some((p) => p.margin !== null && p.margin > THRESHOLDS.stabilityMargin.value);
      for (const l of over(now, (x) => x.deadShare, thr)) {
        if (known.has(l.layer)) continue;
        out.push(finding('dead-units', {
          severity: 'warning', layer: l.layer, step: now.step, measured: l.deadShare as number, threshold: 'deadShare',
          statement: `At step ${now.step}, ${pct(l.deadShare as number)} of layer ${l.layer}'s ${l.units} ${l.activation} units are inactive on every row; they were alive at step 0${unstable ? ', and the learning rate exceeded its stability limit on the way' : ''}.`,
          proposal: unstable && first !== undefined ? lrProposal(first, 0, THRESHOLDS.proposalLrFraction.value) : null,
        }));
      }
    }
    return out;
  },
};

/**
 * `init-scale`: a layer's initial weight spread is more than 2× off the fan-in rule of its
 * activation (one finding, for the worst layer). Proposal: the rule's scheme at gain 1, from step 0.
 */
export const initScale: Rule = {
  id: 'init-scale',
  measures: 'each layer\'s initial weight spread against the fan-in rule of its activation (LeCun 1998, He 2015)',
  thresholds: ['initSpreadFactor'],
  evaluate(e: Evidence): Finding[] {
    const chosen = e.init?.chosen;
    if (!chosen) return [];
    const f = THRESHOLDS.initSpreadFactor.value;
    const worst = chosen.layers.reduce<(typeof chosen.layers)[number] | null>((w, l) => (w === null || Math.abs(Math.log(l.ratio)) > Math.abs(Math.log(w.ratio)) ? l : w), null);
    if (worst === null || (worst.ratio <= f && worst.ratio >= 1 / f)) return [];
    const high = worst.ratio > f;
    const what = chosen.scheme === 'explicit' ? 'the explicit weights (model.weights; init keys do not apply)' : `${chosen.scheme} at gain ${fmt(chosen.gain)}`;
    return [finding('init-scale', {
      severity: 'warning', layer: worst.layer, step: 0, measured: worst.ratio, threshold: 'initSpreadFactor', value: high ? f : 1 / f,
      statement: `Layer ${worst.layer}'s initial weight spread ${fmt(worst.weightSpread)} under ${what} is ${fmt(high ? worst.ratio : 1 / worst.ratio)}× ${high ? 'above' : 'below'} the fan-in rule's ${fmt(worst.ruleSpread)} for ${worst.activation} (fan-in ${worst.fanIn}).`,
      proposal: initProposal(e),
    })];
  },
};
