/** Rules on the step size: `step-size-unstable` (η above the measured limit) and `diverged`. */
import type { Finding } from '../types';
import type { Evidence } from '../evidence';
import { finding, fmt, type Rule } from '../rule';
import { THRESHOLDS } from '../thresholds';
import { limitedPoints, lrProposal } from '../proposals';

/**
 * `step-size-unstable`: the learning rate in effect exceeds the largest stable learning rate of
 * the local quadratic model at a measured step (η·λmax/2 > 1 for plain gradient descent).
 * Proposal: lr = 0.9 × the limit measured at the first crossing, branching from the measured step
 * before it (the limit there was higher, so 0.9 × the crossed limit satisfies both).
 * Severity `problem` when the loss then rose, `warning` while it still falls (full-batch gradient
 * descent can keep descending at the edge of stability, Cohen et al. 2021).
 */
export const stepSizeUnstable: Rule = {
  id: 'step-size-unstable',
  measures: 'the learning rate in effect against the largest stable learning rate at each measured step',
  thresholds: ['stabilityMargin'],
  evaluate(e: Evidence): Finding[] {
    const points = limitedPoints(e);
    const k = points.findIndex((p) => p.margin !== null && p.margin > THRESHOLDS.stabilityMargin.value);
    if (k < 0) return [];
    const cross = points[k];
    const before = k > 0 ? points[k - 1] : cross;
    const limit = cross.largestStableLr as number;
    const atCross = e.trajectory.find((r) => r.step >= cross.step);
    const last = e.trajectory[e.trajectory.length - 1];
    const rose = last !== undefined && atCross !== undefined && !(last.loss <= atCross.loss);
    // From the step before the crossing, with the crossing's own (lower) limit: a rate fitted to the
    // earlier limit could exceed the one that was crossed.
    const proposal = lrProposal(cross, before.step, THRESHOLDS.proposalLrFraction.value);
    return [finding('step-size-unstable', {
      severity: rose ? 'problem' : 'warning',
      step: cross.step,
      measured: cross.lr,
      threshold: 'stabilityMargin',
      value: limit,
      statement: `At step ${cross.step} the learning rate ${fmt(cross.lr)} exceeds the largest stable rate ${fmt(limit)} (${cross.formula}, sharpness ${fmt(cross.sharpness)})${rose ? ' and the loss rose afterwards' : ''}; the limit was ${fmt(before.largestStableLr as number)} at step ${before.step}.`,
      proposal,
    })];
  },
};

/**
 * `diverged`: the loss became non-finite or rose above 1000× its start. Proposal: from the last
 * checkpoint before it whose loss was still finite and below that bound, lr = 0.9 × the limit
 * measured at or before that checkpoint (else the first limit measured before the blow-up).
 */
export const diverged: Rule = {
  id: 'diverged',
  measures: 'the training loss against a thousandfold its value at step 0, and whether it stays finite',
  thresholds: ['divergenceFactor'],
  evaluate(e: Evidence): Finding[] {
    const t = e.trajectory;
    if (t.length === 0) return [];
    const start = t[0].loss;
    const factor = THRESHOLDS.divergenceFactor.value;
    const bound = factor * Math.abs(start);
    const ok = (loss: number): boolean => Number.isFinite(loss) && loss <= bound;
    const bad = t.find((r) => !ok(r.loss));
    if (bad === undefined) return [];
    const ratio = Number.isFinite(bad.loss) ? bad.loss / Math.abs(start) : Infinity;
    const goodSteps = new Set(t.filter((r) => r.step < bad.step && ok(r.loss)).map((r) => r.step));
    const candidates = (e.checkpointSteps ?? [...goodSteps]).filter((s) => s < bad.step && goodSteps.has(s));
    const atStep = candidates.length > 0 ? Math.max(...candidates) : 0;
    // The limit at the state the branch starts from; else the first measurement before the blow-up.
    const measured = limitedPoints(e).filter((p) => p.step < bad.step);
    const from = measured.filter((p) => p.step <= atStep).pop() ?? measured[0];
    let proposal = null;
    let how = 'no stability limit was measured before it, so no learning rate is proposed';
    if (from !== undefined) {
      proposal = lrProposal(from, atStep, THRESHOLDS.proposalLrFraction.value);
      how = `the largest stable rate was ${fmt(from.largestStableLr as number)} at step ${from.step} (${from.formula}), against ${fmt(from.lr)} in effect`;
    }
    const what = Number.isFinite(bad.loss) ? `rose to ${fmt(bad.loss)}, ${fmt(ratio)}× its start ${fmt(start)}` : `became ${fmt(bad.loss)} (start ${fmt(start)})`;
    return [finding('diverged', {
      severity: 'problem',
      step: bad.step,
      measured: ratio,
      threshold: 'divergenceFactor',
      statement: `The training loss ${what} at step ${bad.step}; ${how}.`,
      proposal,
    })];
  },
};
