/** Rules on the measured curvature: `negative-curvature`, `ill-conditioned`. */
import type { Finding, Proposal } from '../types';
import type { Evidence } from '../evidence';
import { finding, fmt, type Rule } from '../rule';
import { THRESHOLDS } from '../thresholds';
import { farFromMinimum } from './balance';

/** `negative-curvature`: λmin < 0 with |λmin| above 10% of λmax (a saddle region). Info; no proposal. */
export const negativeCurvature: Rule = {
  id: 'negative-curvature',
  measures: '|λmin| / λmax of the Hessian when λmin is negative',
  thresholds: ['negativeCurvatureRatio'],
  evaluate(e: Evidence): Finding[] {
    const c = e.curvature;
    if (!c || c.lambdaMin === null || !(c.lambdaMin < 0)) return [];
    const ratio = c.lambdaMax > 0 ? -c.lambdaMin / c.lambdaMax : Infinity;
    if (!(ratio > THRESHOLDS.negativeCurvatureRatio.value)) return [];
    return [finding('negative-curvature', {
      severity: 'info', step: c.step, measured: ratio, threshold: 'negativeCurvatureRatio',
      statement: `At step ${c.step} the Hessian has λmin = ${fmt(c.lambdaMin)} against λmax = ${fmt(c.lambdaMax)} (ratio ${fmt(ratio)}): the weights sit where the loss curves downwards in some direction, so the quadratic model's step-size limit describes only the positive part.`,
    })];
  },
};

/** A preconditioned optimizer: L-BFGS with its line search at full batch, Adam with its published defaults otherwise. */
function preconditionedProposal(e: Evidence, atStep: number): Proposal | null {
  if (e.setup.optimizer !== 'sgd') return null;
  // sgd's momentum/nesterov would be refused by the new optimizer unless cleared.
  const clear = { ...(e.setup.momentum !== 0 ? { momentum: 0 } : {}), ...(e.setup.nesterov ? { nesterov: false } : {}) };
  if (e.setup.fullBatch) return { atStep, set: { optimizer: 'lbfgs', lr: 1, ...clear } };
  // source: Kingma & Ba, ICLR 2015 (Adam's default step 1e-3).
  return { atStep, set: { optimizer: 'adam', lr: 0.001, ...clear } };
}

/**
 * `ill-conditioned`: the condition number (λmax over the smallest positive eigenvalue) exceeds
 * 1e4, so a plain gradient step that is stable along λmax crawls along the flattest directions.
 * Proposal for plain SGD: a preconditioned optimizer from the measured step.
 */
export const illConditioned: Rule = {
  id: 'ill-conditioned',
  measures: 'the condition number λmax / λmin(positive) of the Hessian',
  thresholds: ['conditionNumber'],
  evaluate(e: Evidence): Finding[] {
    const c = e.curvature;
    if (!c || c.conditionNumber === null || !(c.conditionNumber > THRESHOLDS.conditionNumber.value)) return [];
    const proposal = preconditionedProposal(e, c.step);
    // A network whose loss already fell far below the best constant prediction is learning despite
    // its near-flat directions (typically many eigenvalues near zero): then it is information only.
    const learning = e.setup.baselineLoss !== null && !farFromMinimum(e);
    return [finding('ill-conditioned', {
      severity: learning ? 'info' : 'warning', step: c.step, measured: c.conditionNumber, threshold: 'conditionNumber',
      statement: `At step ${c.step} the condition number is ${fmt(c.conditionNumber)} (λmax ${fmt(c.lambdaMax)}): a step that is stable along the sharpest direction shrinks the error along the flattest by at most ${fmt(2 / c.conditionNumber)} per step${learning ? ', though the loss is already far below the best constant prediction\'s' : ''}${proposal ? `; ${String(proposal.set.optimizer)} rescales the directions` : ''}.`,
      proposal,
    })];
  },
};
