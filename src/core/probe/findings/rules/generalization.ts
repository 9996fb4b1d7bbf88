/** Rule on held-out against training loss: `overfitting`. */
import type { Finding, Proposal } from '../types';
import type { Evidence } from '../evidence';
import { generalization } from '../../generalization';
import { finding, fmt, pct, type Rule } from '../rule';
import { THRESHOLDS } from '../thresholds';

/**
 * Early stopping written as a recipe change: from the held-out minimum k, a cosine schedule whose
 * `steps` is k and whose floor is 0 has already reached 0 there, so the branch keeps the weights
 * of the held-out minimum however long it is stepped. Null when the recipe has another schedule
 * kind (its keys would not fit a cosine schedule) or the minimum is at step 0.
 */
function stopProposal(e: Evidence, bestStep: number): Proposal | null {
  if (bestStep < 1 || (e.setup.schedule !== 'constant' && e.setup.schedule !== 'cosine')) return null;
  return { atStep: bestStep, set: { 'schedule.kind': 'cosine', 'schedule.steps': bestStep, 'schedule.floor': 0 } };
}

/**
 * `overfitting`: the held-out loss rose more than 10% above its minimum over at least 10 updates
 * while the training loss kept falling. Proposal: stop at the held-out minimum (a cosine schedule
 * that has reached 0 there), from that step.
 */
export const overfitting: Rule = {
  id: 'overfitting',
  measures: 'the held-out loss\'s rise above its minimum while the training loss falls',
  thresholds: ['overfittingRise', 'trendWindow'],
  evaluate(e: Evidence): Finding[] {
    const g = generalization(e.trajectory);
    if (g === null || g.stepsSinceBest < THRESHOLDS.trendWindow.value || !g.trainFellSinceBest) return [];
    if (!(g.riseSinceBest > THRESHOLDS.overfittingRise.value)) return [];
    const proposal = stopProposal(e, g.best.step);
    return [finding('overfitting', {
      severity: 'warning', step: g.last.step, measured: g.riseSinceBest, threshold: 'overfittingRise',
      statement: `The held-out loss rose ${pct(g.riseSinceBest)} from its minimum ${fmt(g.best.heldOut)} at step ${g.best.step} to ${fmt(g.last.heldOut)} at step ${g.last.step}, while the training loss fell from ${fmt(g.best.train)} to ${fmt(g.last.train)}; stopping at step ${g.best.step} keeps the better held-out loss${proposal ? ' (a cosine schedule that reaches 0 at that step stops there)' : ''}.`,
      proposal,
    })];
  },
};
