/**
 * The readouts and findings each branch of a cell's grove keeps: measurements (curvature,
 * sharpness trace, audit, noise scale), the diagnosis readouts (activation health at step 0 and
 * at the cursor, initialization and data checks) and the findings evaluated over them. The cell
 * grove owns one book; the engine host asks it to re-diagnose a branch after every action that
 * changes what the branch shows (stepping, going to a step, discarding, forking, a measurement).
 *
 * Costs of one diagnosis: the initialization check once per setup (four forward passes; a branch
 * that keeps its parent's setup copies its parent's), the stability limit of the standardized
 * setup once per branch and only when the inputs are unscaled (≤ 100 Hessian-vector products),
 * then one forward pass for the activation health at the cursor and the rules themselves.
 */
import type { Grove } from '../core/session';
import { currentActivations, diagnoseRng, evaluateFindings, standardizedFit } from '../core/probe/findings';
import type { StandardizedFit } from '../core/probe/findings';
import { inputsUnscaled } from '../core/probe/findings/proposals';
import type { BranchReadouts, Finding } from './protocol';
import { deeperUpTo } from './deeper';
import { branchEvidence, derivedReadouts, emptyReadouts, staticDiagnosis, triedAs, type ChildFork } from './diagnosis';

/** Readouts and findings of every branch of one grove. */
export class BranchBook {
  private readonly readouts = new Map<string, BranchReadouts>();
  /** The standardized setup's stability limit per branch (null: measured, none applies). */
  private readonly standardized = new Map<string, StandardizedFit | null>();

  /** @param grove - the branches whose readouts this book keeps. */
  constructor(private readonly grove: Grove) {}

  /** The readouts a branch keeps (the live object: callers update it in place). */
  of(name: string): BranchReadouts {
    let r = this.readouts.get(name);
    if (r === undefined) {
      r = emptyReadouts();
      this.readouts.set(name, r);
    }
    return r;
  }

  /** Replaces a branch's readouts (restoring from a ledger). */
  set(name: string, r: BranchReadouts): void {
    this.readouts.set(name, r);
  }

  /** True when a branch holds a diagnosis (findings, activation health or the static checks). */
  diagnosed(name: string): boolean {
    const r = this.readouts.get(name);
    return r !== undefined && (r.findings.length > 0 || r.activations.now !== null || r.init !== null || r.data !== null);
  }

  /** Moves a branch's readouts to a new name. */
  rename(name: string, to: string): void {
    for (const map of [this.readouts, this.standardized] as Map<string, unknown>[]) {
      if (!map.has(name)) continue;
      map.set(to, map.get(name));
      map.delete(name);
    }
  }

  /** Forgets the readouts of deleted branches. */
  remove(names: readonly string[]): void {
    for (const n of names) {
      this.readouts.delete(n);
      this.standardized.delete(n);
    }
  }

  /** Drops the measurements taken after `step` (steps discarded). */
  dropAfter(name: string, step: number): void {
    const r = this.of(name);
    r.sharpness = r.sharpness.filter((p) => p.step <= step);
    if (r.curvature !== null && r.curvature.step > step) r.curvature = null;
    if (r.audit !== null && r.audit.step > step) r.audit = null;
    if (r.noise !== null && (r.noise.step ?? 0) > step) r.noise = null;
    r.deeper = deeperUpTo(r.deeper, step);
  }

  /** The static parts of a branch's diagnosis: its parent's when it keeps the parent's setup, else computed. */
  private ensureStatic(name: string): void {
    const r = this.of(name);
    if (r.init !== null || r.data !== null || r.activations.start !== null) return;
    const o = this.grove.origin(name);
    const parent = o !== null && !o.restart ? this.readouts.get(o.parent) : undefined;
    if (parent !== undefined && (parent.init !== null || parent.data !== null)) {
      r.init = parent.init;
      r.data = parent.data;
      r.activations.start = parent.activations.start;
      return;
    }
    const s = staticDiagnosis(this.grove.experiment(name));
    r.init = s.init;
    r.data = s.data;
    r.activations.start = s.start;
  }

  /**
   * Re-evaluates a branch's findings at its cursor: the static parts once, the activation health
   * at the cursor (one forward pass), the standardized setup's limit when the inputs are
   * unscaled (once), then every rule (`evaluateFindings`).
   */
  diagnose(name: string): Finding[] {
    this.ensureStatic(name);
    const r = this.of(name);
    const session = this.grove.session(name);
    const experiment = this.grove.experiment(name);
    r.activations.now = currentActivations(session) ?? null;
    const input = { experiment, trajectory: this.toCursor(name), checkpointSteps: this.grove.checkpointSteps(name), readouts: r, standardized: null };
    if (!this.standardized.has(name) && inputsUnscaled(branchEvidence(input))) {
      // The same stream as `stepwell diagnose`, so the cell and the CLI propose the same rate.
      this.standardized.set(name, standardizedFit(experiment, diagnoseRng(experiment.seed).fork('standardized')));
    }
    r.findings = evaluateFindings(branchEvidence({ ...input, standardized: this.standardized.get(name) ?? null }));
    return r.findings;
  }

  /** A copy of a branch's readouts with what the worker derives from them (for replies). */
  view(name: string): BranchReadouts {
    const r = this.of(name);
    return {
      ...r,
      sharpness: r.sharpness.slice(),
      activations: { ...r.activations },
      findings: r.findings.slice(),
      deeper: { ...r.deeper },
      derived: derivedReadouts(this.toCursor(name), r.sharpness, this.grove.experiment(name), r.findings, this.children(name))
    };
  }

  /** Per finding of a branch, the child branch that tried its proposal (or null). */
  tried(name: string): (string | null)[] {
    const children = this.children(name);
    return this.of(name).findings.map((f) => triedAs(f.proposal, children));
  }

  /** The branches forked from `name`, with their fork step and patch. */
  private children(name: string): ChildFork[] {
    return this.grove.children(name).map((c) => {
      const o = this.grove.origin(c);
      return { name: c, step: o?.step ?? 0, patch: o?.patch ?? {} };
    });
  }

  /** Every branch's findings tagged with its name, in the grove's branch order (what the ledger keeps). */
  taggedFindings(): Record<string, unknown>[] {
    return this.grove.names().flatMap((name) => this.of(name).findings.map((f) => ({ ...f, branch: name })));
  }

  /** The branch's records up to its cursor. */
  private toCursor(name: string): ReturnType<Grove['trajectory']> {
    const at = this.grove.session(name).stepCount;
    const t = this.grove.trajectory(name);
    return t.length > 0 && t[t.length - 1].step > at ? t.filter((x) => x.step <= at) : t;
  }
}
