/** Rule on the gradient audit: `gradient-mismatch`. */
import type { Finding } from '../types';
import type { Evidence } from '../evidence';
import { finding, fmt, type Rule } from '../rule';
import { canDie } from '../../activation-health';
import { THRESHOLDS } from '../thresholds';

/**
 * `gradient-mismatch`: a layer's audit verdict is worse than acceptable (relative error above
 * 1e-4) and no step size of the sweep brings the worst entries below 1e-4 (so round-off and
 * truncation are ruled out). `wrong` (above 1e-2) is a problem; `suspicious` is a warning unless
 * a ReLU kink at or above the layer explains it (acceptable near kinks, per the same notes). No
 * proposal: the definition must be fixed.
 */
export const gradientMismatch: Rule = {
  id: 'gradient-mismatch',
  measures: 'each layer\'s largest relative error between the analytic gradient and central differences',
  thresholds: ['auditAcceptable'],
  evaluate(e: Evidence): Finding[] {
    const a = e.audit;
    if (!a) return [];
    const kinked = (layer: number): boolean => e.setup.layers.slice(Math.max(0, layer)).some((l) => canDie(l.activation));
    const out: Finding[] = [];
    // When some step of the sweep brings the worst entries to an acceptable error, round-off or
    // truncation explains the mismatch, not a wrong derivative.
    if (!(a.bestOverSweep > THRESHOLDS.auditAcceptable.value)) return [];
    for (const l of a.layers) {
      if (l.verdict !== 'wrong' && l.verdict !== 'suspicious') continue;
      if (l.verdict === 'suspicious' && kinked(l.layer)) continue;
      const where = l.layer >= 0 ? `Layer ${l.layer}'s` : 'The';
      out.push(finding('gradient-mismatch', {
        severity: l.verdict === 'wrong' ? 'problem' : 'warning', layer: l.layer >= 0 ? l.layer : null, step: a.step,
        measured: l.maxRelError, threshold: 'auditAcceptable',
        statement: `${where} analytic gradient differs from central differences by a relative ${fmt(l.maxRelError)} (${l.verdict}); no step of the sweep does better than ${fmt(a.bestOverSweep)}, so round-off does not explain it.`,
      }));
    }
    return out;
  },
};
