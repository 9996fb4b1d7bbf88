/** Rules on the data: `inputs-unscaled`, `duplicate-rows`. */
import type { Finding } from '../types';
import type { Evidence } from '../evidence';
import { finding, fmt, pct, type Rule } from '../rule';
import { THRESHOLDS } from '../thresholds';
import { standardizeProposal } from '../proposals';

/**
 * `inputs-unscaled`: the features' spreads differ by more than 100×, or a feature's mean lies
 * more than 10 spreads from zero. Proposal: `data.standardize: true` with lr fitted to the
 * standardized setup's stability limit (standardizing changes the curvature), from step 0.
 */
export const inputsUnscaled: Rule = {
  id: 'inputs-unscaled',
  measures: 'the ratio of the largest to the smallest feature spread, and each feature\'s |mean| / spread',
  thresholds: ['inputSpreadRatio', 'inputOffsetRatio'],
  evaluate(e: Evidence): Finding[] {
    const d = e.data;
    if (!d || d.standardized) return [];
    const proposal = standardizeProposal(e);
    const lrNote = proposal?.set.lr !== undefined ? ` with lr ${fmt(proposal.set.lr as number)} fitted to the standardized setup's limit` : '';
    if (d.spreadRatio !== null && d.spreadRatio > THRESHOLDS.inputSpreadRatio.value) {
      const spreads = d.features.filter((f) => !f.constant);
      const wide = spreads.reduce((a, b) => (b.spread > a.spread ? b : a));
      const narrow = spreads.reduce((a, b) => (b.spread < a.spread ? b : a));
      return [finding('inputs-unscaled', {
        severity: 'warning', measured: d.spreadRatio, threshold: 'inputSpreadRatio',
        statement: `Feature spreads differ ${fmt(d.spreadRatio)}-fold (feature ${wide.index}: ${fmt(wide.spread)}, feature ${narrow.index}: ${fmt(narrow.spread)}); standardizing${lrNote} evens the curvature across inputs.`,
        proposal,
      })];
    }
    const off = d.largestOffset;
    if (off !== null && off.ratio > THRESHOLDS.inputOffsetRatio.value) {
      const f = d.features[off.feature];
      return [finding('inputs-unscaled', {
        severity: 'warning', measured: off.ratio, threshold: 'inputOffsetRatio',
        statement: `Feature ${off.feature} has mean ${fmt(f.mean)} but spread ${fmt(f.spread)}: its offset is ${fmt(off.ratio)} spreads from zero; standardizing${lrNote} removes the large curvature direction it adds.`,
        proposal,
      })];
    }
    return [];
  },
};

/** `duplicate-rows`: more than 10% of the training rows repeat an earlier row exactly. No proposal. */
export const duplicateRows: Rule = {
  id: 'duplicate-rows',
  measures: 'the share of training rows that repeat an earlier row exactly (inputs and targets)',
  thresholds: ['duplicateShare'],
  evaluate(e: Evidence): Finding[] {
    const d = e.data;
    if (!d || !(d.duplicateShare > THRESHOLDS.duplicateShare.value)) return [];
    const leak = d.heldOutInTraining > 0 ? `; ${d.heldOutInTraining} of the ${d.heldOutRows} held-out rows also occur in training` : '';
    return [finding('duplicate-rows', {
      severity: 'warning', measured: d.duplicateShare, threshold: 'duplicateShare',
      statement: `${d.duplicateRows} of ${d.rows} training rows (${pct(d.duplicateShare)}) repeat an earlier row exactly, which weights those rows more in the loss${leak}.`,
    })];
  },
};
