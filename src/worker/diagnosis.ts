/**
 * A branch's diagnosis in the worker, as plain functions over what the cell grove holds: the
 * parts of the findings' evidence that depend only on the experiment (computed once per branch),
 * the evidence assembled from the branch's trajectory and kept readouts at its cursor, and the
 * readouts derived from them (layer balance, generalization, the sharpness trace's verdict) that
 * replies carry but the ledger never stores. Numbers come from `core/probe`; nothing is decided
 * here that core does not decide.
 */
import type { Experiment, Recipe } from '../core/setup';
import type { StepRecord } from '../core/state';
import type { ActivationHealth } from '../core/probe/activation-health';
import type { InitCheck } from '../core/probe/init-check';
import type { DataReport } from '../core/probe/data-checks';
import { layerBalance } from '../core/probe/balance';
import { generalization } from '../core/probe/generalization';
import { eigenvalueLimit, eigenvaluesAbove, stabilityFactor, stabilitySentence, stabilityVerdict, traceSentence, traceVerdict } from '../core/probe/curvature';
import type { CurvatureSummary } from '../core/probe/curvature';
import { auditFacts, curvatureFacts, sharpnessPointFrom, setupFacts, staticEvidence } from '../core/probe/findings';
import type { Evidence, SharpnessPoint as EvidencePoint, StandardizedFit } from '../core/probe/findings';
import type { BranchReadouts, CurvatureResult, DerivedReadouts, Finding, SharpnessPoint } from './protocol';
import { BALANCE_ROWS, DATA_FEATURES_KEPT, GENERALIZATION_POINTS } from './protocol';

/** What a branch's diagnosis needs of its experiment alone: computed once, kept in the ledger. */
export interface StaticDiagnosis {
  init: InitCheck | null;
  data: DataReport | null;
  /** Activation health at step 0 (the initialization check's own). */
  start: ActivationHealth | null;
}

/** Readouts of a branch before anything is measured. */
export function emptyReadouts(): BranchReadouts {
  return {
    curvature: null,
    sharpness: [],
    audit: null,
    noise: null,
    activations: { start: null, now: null },
    init: null,
    data: null,
    findings: [],
    deeper: {},
    derived: { balance: null, generalization: null, sharpness: { verdict: { kind: 'no-limit', measured: 0 }, sentence: traceSentence({ kind: 'no-limit', measured: 0 }) }, standardization: null, tried: [] }
  };
}

/** A data report with at most {@link DATA_FEATURES_KEPT} features listed (the counts and ratios still cover them all). */
export function trimDataReport(r: DataReport): DataReport {
  return r.features.length <= DATA_FEATURES_KEPT ? r : { ...r, features: r.features.slice(0, DATA_FEATURES_KEPT) };
}

/**
 * The parts of the evidence that depend only on the experiment: the initialization check (four
 * forward passes over the training rows), the data checks and the activation health at step 0.
 */
export function staticDiagnosis(experiment: Experiment): StaticDiagnosis {
  const s = staticEvidence(experiment);
  return { init: s.init ?? null, data: s.data === undefined ? null : trimDataReport(s.data), start: s.activationsStart ?? null };
}

/**
 * A trace point as the findings read it: the stability bound of the recipe at the point's
 * sharpness and the learning rate in effect there. Points stored by ledger version 2 lack the
 * rate; their limit is factor/η, so η = factor/limit (exact up to one rounding). The Lanczos
 * error bound is not kept by the trace.
 */
export function evidencePoint(recipe: Recipe, p: SharpnessPoint): EvidencePoint {
  const factor = stabilityFactor(recipe).factor;
  const lr = p.lr ?? (factor !== null && p.limit !== null && p.limit > 0 ? factor / p.limit : recipe.lr);
  return sharpnessPointFrom(recipe, p.step, p.sharpness, NaN, lr);
}

/** Everything {@link branchEvidence} reads. */
export interface EvidenceInput {
  experiment: Experiment;
  /** The branch's records up to its cursor. */
  trajectory: readonly StepRecord[];
  checkpointSteps: readonly number[];
  readouts: BranchReadouts;
  /** The stability limit of the standardized setup, when measured (only for unscaled inputs). */
  standardized: StandardizedFit | null;
}

/**
 * The evidence of a branch at its cursor: the static parts, the activation health now, and the
 * costly parts measured at or before the cursor (sharpness trace, curvature, audit, noise).
 */
export function branchEvidence(input: EvidenceInput): Evidence {
  const { experiment, trajectory, readouts: r } = input;
  const cursor = trajectory.length > 0 ? trajectory[trajectory.length - 1].step : 0;
  const e: Evidence = { setup: setupFacts(experiment), trajectory, checkpointSteps: input.checkpointSteps.filter((s) => s <= cursor) };
  if (r.init !== null) e.init = r.init;
  if (r.data !== null) e.data = r.data;
  if (r.activations.start !== null) e.activationsStart = r.activations.start;
  if (r.activations.now !== null) e.activationsNow = r.activations.now;
  const points = r.sharpness.filter((p) => p.step <= cursor);
  if (points.length > 0) e.sharpness = points.map((p) => evidencePoint(experiment.recipe, p));
  if (r.curvature !== null && r.curvature.step <= cursor) e.curvature = curvatureFacts(r.curvature.summary, r.curvature.step);
  if (r.audit !== null && r.audit.step <= cursor) e.audit = auditFacts(r.audit.result, r.audit.step);
  if (r.noise !== null && (r.noise.step ?? 0) <= cursor) e.noise = r.noise;
  if (input.standardized !== null) e.standardized = input.standardized;
  return e;
}

/** Every n-th of `xs` so that at most `max` remain, the last always kept. */
function everyNth<T>(xs: readonly T[], max: number): T[] {
  if (xs.length <= max) return xs.slice();
  const stride = Math.ceil(xs.length / max);
  return xs.filter((_, i) => i % stride === 0 || i === xs.length - 1);
}

/** A fork of the branch: where it forked and what it changed. */
export interface ChildFork {
  name: string;
  step: number;
  patch: Readonly<Record<string, unknown>>;
}

/** The child branch that tried a proposal: forked at its step with exactly its keys and values, or null. */
export function triedAs(proposal: Finding['proposal'], children: readonly ChildFork[]): string | null {
  if (proposal === null) return null;
  const want = Object.entries(proposal.set);
  const same = (c: ChildFork): boolean =>
    c.step === proposal.atStep && Object.keys(c.patch).length === want.length && want.every(([k, v]) => Object.is(c.patch[k], v));
  return children.find(same)?.name ?? null;
}

/** What the worker derives for a branch from its records (up to the cursor), its sharpness trace, its experiment and its children. */
export function derivedReadouts(trajectory: readonly StepRecord[], sharpness: readonly SharpnessPoint[], experiment: Experiment, findings: readonly Finding[] = [], children: readonly ChildFork[] = []): DerivedReadouts {
  const hasLayers = trajectory.some((r) => r.layers.length > 0);
  const g = generalization(trajectory);
  const verdict = traceVerdict(sharpness);
  return {
    balance: hasLayers ? layerBalance(trajectory, { maxRows: BALANCE_ROWS }) : null,
    generalization: g === null ? null : (() => {
      const keep = everyNth(g.steps.map((_, i) => i), GENERALIZATION_POINTS);
      return { ...g, steps: keep.map((i) => g.steps[i]), train: keep.map((i) => g.train[i]), heldOut: keep.map((i) => g.heldOut[i]), gap: keep.map((i) => g.gap[i]) };
    })(),
    sharpness: { verdict, sentence: traceSentence(verdict) },
    standardization: experiment.setup.data?.standardized ?? null,
    tried: findings.map((f) => triedAs(f.proposal, children))
  };
}

/** The verdict and sentence of a curvature summary's stability bound, its limit line on the eigenvalues and which measured eigenvalues lie above it. */
export function curvatureVerdict(summary: CurvatureSummary, ends: { top: ArrayLike<number>; bottom: ArrayLike<number> }): Pick<CurvatureResult, 'verdict' | 'sentence' | 'limitLine' | 'aboveTop' | 'aboveBottom'> {
  const s = summary.stability;
  return {
    verdict: stabilityVerdict(s),
    sentence: stabilitySentence(s),
    limitLine: eigenvalueLimit(s),
    aboveTop: eigenvaluesAbove(Array.from(ends.top), s),
    aboveBottom: eigenvaluesAbove(Array.from(ends.bottom), s)
  };
}
