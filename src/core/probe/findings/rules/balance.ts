/** Rules on the trajectory: `update-ratio-high`, `update-ratio-low`, `vanishing-gradient`, `plateau`. */
import type { Finding, Proposal, ProposalValue } from '../types';
import type { Evidence } from '../evidence';
import { layerBalance, medianOf, type LayerBalance } from '../../balance';
import { finding, fmt, pct, type Rule } from '../rule';
import { THRESHOLDS } from '../thresholds';
import { firstOrder, initOffRule, initProposal, inputsUnscaled, limitedPoints, lrProposal, roundTo, standardizeProposal } from '../proposals';
import { healthAtStart, startProposal } from './units';

/** True when the loss is still far from a minimum: above 90% of the best constant prediction's loss. */
export function farFromMinimum(e: Evidence): boolean {
  const base = e.setup.baselineLoss;
  const last = e.trajectory[e.trajectory.length - 1];
  return base !== null && base > 0 && last !== undefined && !(last.loss < THRESHOLDS.plateauBaseline.value * base);
}

/**
 * Per-layer `lrScale` values that move the outlying layers (verdict high or low) to the level of
 * the others: the target is the median recent ratio of the layers within the far thresholds
 * (when every layer is outlying, the median of all, clamped into the band around 1e-3), and each
 * outlying layer's multiplier is scaled by target / its ratio (update size is proportional to
 * the multiplier). Layers within keep theirs. Rounded to 3 digits; null when a ratio is missing.
 */
export function equalizingScales(e: Evidence, b: LayerBalance): Record<string, ProposalValue> | null {
  const ratios = b.recent.map((r) => r.medianRatio);
  if (ratios.some((r) => r === null) || ratios.length !== e.setup.layers.length) return null;
  const within = b.recent.filter((r) => r.verdict === 'within').map((r) => r.medianRatio as number);
  const target = within.length > 0 ? (medianOf(within) as number) : Math.min(b.band.high, Math.max(b.band.low, medianOf(ratios as number[]) as number));
  const set: Record<string, ProposalValue> = {};
  b.recent.forEach((r, l) => {
    if (r.verdict === 'high' || r.verdict === 'low') set[`layers[${l}].lrScale`] = roundTo(e.setup.layers[l].lrScale * (target / (r.medianRatio as number)));
  });
  return Object.keys(set).length > 0 ? set : null;
}

function ratioRule(kind: 'high' | 'low'): Rule {
  const id = kind === 'high' ? 'update-ratio-high' : 'update-ratio-low';
  const thr = kind === 'high' ? 'updateRatioHigh' : 'updateRatioLow';
  return {
    id,
    measures: `each layer's median ‖ΔW‖/‖W‖ over the last ${THRESHOLDS.balanceWindow.value} updates, against ${kind === 'high' ? 'two orders of magnitude above' : 'two orders of magnitude below'} 1e-3`,
    thresholds: [thr, 'updateRatioCenter'],
    evaluate(e: Evidence): Finding[] {
      if (e.setup.layers.length === 0) return [];
      const b = layerBalance(e.trajectory);
      const hits = b.recent.filter((r) => r.verdict === kind);
      if (hits.length === 0) return [];
      // A layer that barely moves matters only while there is something left to learn, or while others move far more.
      const others = (l: number): number | null => medianOf(b.recent.filter((r) => r.layer !== l && r.medianRatio !== null).map((r) => r.medianRatio as number));
      const relevant = kind === 'high' ? hits : hits.filter((h) => farFromMinimum(e) || (others(h.layer) ?? 0) > 100 * (h.medianRatio as number));
      const scales = firstOrder(e) ? equalizingScales(e, b) : null;
      return relevant.map((h) => finding(id, {
        severity: 'warning', layer: h.layer, step: b.window?.to ?? null, measured: h.medianRatio as number, threshold: thr,
        statement: `Layer ${h.layer}'s updates move its weights by ${fmt(h.medianRatio as number)} of their norm per step (median of the last ${b.window?.records ?? 0} updates), ${kind === 'high' ? 'far above' : 'far below'} the 1e-3 of common practice${scales ? '; per-layer rates can even out the layers' : ''}.`,
        proposal: scales ? { atStep: Math.max(0, (h.firstOutside ?? 1) - 1), set: scales } : null,
      }));
    },
  };
}

/** `update-ratio-high`: a layer's ‖ΔW‖/‖W‖ far above the band. Proposal: per-layer lrScale that equalize the ratios. */
export const updateRatioHigh: Rule = ratioRule('high');
/** `update-ratio-low`: a layer's ‖ΔW‖/‖W‖ far below the band while the loss is far from a minimum or other layers move. Same proposal. */
export const updateRatioLow: Rule = ratioRule('low');

/**
 * Sigmoid hidden layers switched to tanh at the fan-in scheme (tanh's slope at 0 is 1, the
 * sigmoid's 1/4). The learning rate is kept: the new network's limit is not measured here (the
 * step-size rules speak on the branch once it is stepped).
 */
function activationProposal(e: Evidence): Proposal | null {
  const layers = e.setup.layers;
  const set: Record<string, ProposalValue> = {};
  layers.slice(0, -1).forEach((l, i) => {
    if (l.activation === 'sigmoid') set[`model.layers[${i}].activation`] = 'tanh';
  });
  if (Object.keys(set).length === 0) return null;
  if (!e.setup.explicitWeights) {
    set['model.init'] = 'lecun-normal';
    set['model.gain'] = 1;
  }
  return { atStep: 0, set };
}

/**
 * `vanishing-gradient`: a layer's gradient norm is below 1e-2 of the last layer's (median over the
 * first or the recent window). Proposal: the fan-in scheme when the init is off its rule or units start
 * saturated; tanh for sigmoid hidden layers otherwise.
 */
export const vanishingGradient: Rule = {
  id: 'vanishing-gradient',
  measures: 'each layer\'s gradient norm over the last layer\'s (median over the recent updates)',
  thresholds: ['gradientDepthRatio'],
  evaluate(e: Evidence): Finding[] {
    if (e.setup.layers.length < 2) return [];
    const b = layerBalance(e.trajectory);
    // Early updates show what the initialization does; recent ones what training has come to.
    const windows = [{ w: b.earlyWindow, pick: (r: (typeof b.recent)[number]) => r.earlyDepthRatio }, { w: b.window, pick: (r: (typeof b.recent)[number]) => r.medianDepthRatio }];
    let worst: { layer: number; ratio: number; from: number; to: number; records: number } | null = null;
    for (const { w, pick } of windows) {
      if (w === null) continue;
      for (const r of b.recent.slice(0, -1)) {
        const x = pick(r);
        if (x !== null && (worst === null || x < worst.ratio)) worst = { layer: r.layer, ratio: x, ...w };
      }
    }
    if (worst === null || !(worst.ratio < THRESHOLDS.gradientDepthRatio.value)) return [];
    const ratio = worst.ratio;
    const saturated = healthAtStart(e)?.layers.some((l) => l.saturatedShare !== null && l.saturatedShare > THRESHOLDS.saturatedShare.value) ?? false;
    const proposal = initOffRule(e) || saturated ? startProposal(e, worst.layer) : activationProposal(e) ?? initProposal(e);
    return [finding('vanishing-gradient', {
      severity: 'warning', layer: worst.layer, step: worst.to, measured: ratio, threshold: 'gradientDepthRatio',
      statement: ratio === 0
        ? `Layer ${worst.layer} receives no gradient at all over steps ${worst.from}–${worst.to} while the last layer does: every path back to it is blocked (saturated or dead units).`
        : `Layer ${worst.layer}'s gradient norm is ${fmt(ratio)} of the last layer's (median over steps ${worst.from}–${worst.to}): gradients shrink by ${fmt(-Math.log10(ratio))} orders of magnitude towards the input.`,
      proposal,
    })];
  },
};

/** The proposal of a plateau's most likely cause, in order: initialization, dead/saturated start, unscaled inputs, vanishing gradients, a rate far below its limit. */
function plateauCause(e: Evidence): { cause: string; proposal: Proposal | null } {
  const start = healthAtStart(e);
  const sat = THRESHOLDS.saturatedShare.value;
  if (initOffRule(e)) return { cause: 'the initial weight spread is off the fan-in rule', proposal: initProposal(e) };
  if (start?.layers.some((l) => (l.saturatedShare ?? 0) > sat || (l.deadShare ?? 0) > THRESHOLDS.deadShare.value)) {
    return { cause: `units start saturated or dead${inputsUnscaled(e) ? ' on unscaled inputs' : ''}`, proposal: startProposal(e, 0) };
  }
  if (inputsUnscaled(e)) return { cause: 'the inputs are unscaled', proposal: standardizeProposal(e) };
  const vanishing = vanishingGradient.evaluate(e)[0];
  if (vanishing !== undefined) return { cause: `gradients vanish towards the input (layer ${vanishing.layer} gets ${fmt(vanishing.measured)} of the last layer's)`, proposal: vanishing.proposal };
  const points = limitedPoints(e);
  const latest = points[points.length - 1];
  if (latest !== undefined && latest.margin !== null && latest.margin < 0.1 && firstOrder(e)) {
    return { cause: `the learning rate is ${fmt(latest.margin)} of its stability limit ${fmt(latest.largestStableLr as number)}`, proposal: lrProposal(latest, 0, THRESHOLDS.fittedLrFraction.value) };
  }
  return { cause: 'no cause among the measured readouts', proposal: null };
}

/**
 * `plateau`: the training loss fell by less than 1% over the last quarter of the run (at least 10
 * updates) while staying above 90% of the best constant prediction's loss. Proposal: the cause's.
 */
export const plateau: Rule = {
  id: 'plateau',
  measures: 'the relative decrease of the training loss over the recent window, while the loss is above 90% of the best constant prediction\'s',
  thresholds: ['plateauDecrease', 'plateauBaseline', 'trendWindow'],
  evaluate(e: Evidence): Finding[] {
    const t = e.trajectory;
    const last = t[t.length - 1];
    if (last === undefined || !farFromMinimum(e) || !Number.isFinite(last.loss)) return [];
    const span = Math.max(THRESHOLDS.trendWindow.value, Math.floor(last.step / 4));
    const first = t.find((r) => r.step >= last.step - span);
    if (first === undefined || last.step - first.step < THRESHOLDS.trendWindow.value || !(first.loss > 0)) return [];
    const decrease = (first.loss - last.loss) / first.loss;
    // Flat either way: a loss that rises is not a plateau (the stability rules speak to it).
    if (!(Math.abs(decrease) < THRESHOLDS.plateauDecrease.value)) return [];
    const base = e.setup.baselineLoss as number;
    const { cause, proposal } = plateauCause(e);
    return [finding('plateau', {
      severity: 'problem', step: last.step, measured: decrease, threshold: 'plateauDecrease',
      statement: `The training loss changed by ${fmt(-100 * decrease)}% from step ${first.step} to ${last.step} and stays at ${pct(last.loss / base)} of the best constant prediction's loss ${fmt(base)}; likely cause: ${cause}.`,
      proposal,
    })];
  },
};
