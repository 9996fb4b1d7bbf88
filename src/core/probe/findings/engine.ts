/**
 * The findings engine: the rule table and one pure function over the evidence. Each rule is a
 * small object (`rule.ts`); the table below is the complete list, one rule per finding id.
 */
import type { Finding, Severity } from './types';
import type { Evidence } from './evidence';
import type { Rule } from './rule';
import { diverged, stepSizeUnstable } from './rules/stability';
import { deadUnits, initScale, saturatedUnits } from './rules/units';
import { duplicateRows, inputsUnscaled } from './rules/data';
import { plateau, updateRatioHigh, updateRatioLow, vanishingGradient } from './rules/balance';
import { illConditioned, negativeCurvature } from './rules/curvature';
import { overfitting } from './rules/generalization';
import { gradientMismatch } from './rules/audit';

/** Every rule, in the order findings of equal severity are listed. */
export const RULES: readonly Rule[] = [
  diverged, stepSizeUnstable, plateau, saturatedUnits, deadUnits, initScale, inputsUnscaled, duplicateRows,
  updateRatioHigh, updateRatioLow, vanishingGradient, negativeCurvature, illConditioned, overfitting, gradientMismatch,
];

const RANK: Readonly<Record<Severity, number>> = { problem: 0, warning: 1, info: 2 };

/**
 * Evaluates every rule over the evidence. Once the run has diverged, findings measured after the
 * divergence describe blown-up weights and are left out (the `diverged` finding speaks for them).
 * Findings come sorted by severity (problem, warning, info), then by rule order, then by layer.
 * Pure: the same evidence always gives the same list.
 */
export function evaluateFindings(evidence: Evidence): Finding[] {
  const out: { f: Finding; order: number }[] = [];
  RULES.forEach((rule, order) => {
    for (const f of rule.evaluate(evidence)) out.push({ f, order });
  });
  const blownAt = out.find((x) => x.f.id === 'diverged')?.f.step ?? null;
  if (blownAt !== null) {
    const kept = out.filter((x) => x.f.id === 'diverged' || x.f.step === null || x.f.step <= blownAt);
    out.length = 0;
    out.push(...kept);
  }
  out.sort((a, b) => RANK[a.f.severity] - RANK[b.f.severity] || a.order - b.order || (a.f.layer ?? -1) - (b.f.layer ?? -1));
  return out.map((x) => x.f);
}
