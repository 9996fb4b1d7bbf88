/**
 * Findings: rule-based statements about an experiment, each with the number it measured, the
 * threshold it compared with and where that threshold comes from, and — where one exists — a
 * proposal: the spec keys to change and the step to branch from. Plain data: findings go into
 * the ledger, the CLI's JSON and the decision record unchanged.
 */

/** How much a finding matters: `problem` (training fails), `warning` (likely harm), `info`. */
export type Severity = 'info' | 'warning' | 'problem';

/** The rule ids. They are a contract (tests, `stepwell diagnose --json`, saved ledgers): never rename one. */
export type FindingId =
  | 'step-size-unstable'
  | 'diverged'
  | 'plateau'
  | 'saturated-units'
  | 'dead-units'
  | 'init-scale'
  | 'inputs-unscaled'
  | 'duplicate-rows'
  | 'update-ratio-high'
  | 'update-ratio-low'
  | 'vanishing-gradient'
  | 'negative-curvature'
  | 'ill-conditioned'
  | 'overfitting'
  | 'gradient-mismatch';

/** A scalar value a proposal sets (flat spec keys take scalars only). */
export type ProposalValue = string | number | boolean;

/**
 * What to try: flat spec keys as `stepwell run --set` takes them (`lr`, `momentum`,
 * `layers[i].lrScale`, and at step 0 also `model.init`, `model.gain`, `data.standardize`),
 * applied as a branch forked at `atStep`.
 */
export interface Proposal {
  atStep: number;
  set: Record<string, ProposalValue>;
}

/** One finding. */
export interface Finding {
  id: FindingId;
  severity: Severity;
  /** Layer index the finding concerns (0-based), or null when it concerns the whole model. */
  layer: number | null;
  /** Step at which it was measured, or null when it does not depend on a step (data checks). */
  step: number | null;
  /** The measured number the rule compared. */
  measured: number;
  /** The threshold it was compared with. */
  threshold: number;
  /** Where the threshold comes from (a published source, `common practice`, or `from memory: …`). */
  source: string;
  /** One sentence with the measured number, readable on its own. */
  statement: string;
  proposal: Proposal | null;
}
