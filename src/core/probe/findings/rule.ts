/**
 * The shape of a rule and the small helpers every rule uses: one place builds a finding from a
 * threshold (so the source string always comes from `thresholds.ts`), and numbers are written
 * the same way in every statement.
 */
import type { Finding, FindingId, Proposal, Severity } from './types';
import type { Evidence } from './evidence';
import { THRESHOLDS, type ThresholdName } from './thresholds';

/** A rule: a small pure object. */
export interface Rule {
  readonly id: FindingId;
  /** What the rule measures, in one line (for the docs and the cell's hover). */
  readonly measures: string;
  /** The threshold(s) it compares with. */
  readonly thresholds: readonly ThresholdName[];
  /** The findings the evidence supports (none when the evidence it needs is missing). */
  evaluate(evidence: Evidence): Finding[];
}

/** The fields of a finding a rule chooses; `threshold` names the entry in `THRESHOLDS`. */
export interface FindingParts {
  severity: Severity;
  layer?: number | null;
  step?: number | null;
  measured: number;
  /** The threshold's name; its value and source are copied from `THRESHOLDS` unless `value` overrides the value. */
  threshold: ThresholdName;
  value?: number;
  statement: string;
  proposal?: Proposal | null;
}

/** Builds a finding of rule `id` (source and threshold value from {@link THRESHOLDS}). */
export function finding(id: FindingId, p: FindingParts): Finding {
  const t = THRESHOLDS[p.threshold];
  return {
    id, severity: p.severity, layer: p.layer ?? null, step: p.step ?? null, measured: p.measured,
    threshold: p.value ?? t.value, source: t.source, statement: p.statement, proposal: p.proposal ?? null,
  };
}

/** A number in a statement: three significant digits, exponent form outside [1e-3, 1e5). */
export function fmt(x: number): string {
  if (!Number.isFinite(x)) return Number.isNaN(x) ? 'NaN' : x > 0 ? '∞' : '−∞';
  if (x === 0) return '0';
  const a = Math.abs(x);
  if (a < 1e-3 || a >= 1e5) return x.toExponential(2);
  return String(Number(x.toPrecision(3)));
}

/** A share as a percentage with at most one decimal. */
export function pct(share: number): string {
  return `${Number((100 * share).toFixed(1))}%`;
}
