/**
 * The worker's view of one stepwell cell: its spec text, the core {@link Grove} of branches, the
 * active branch, the readouts each branch keeps (latest curvature, sharpness trace, latest
 * audit) and the findings carried in its ledger. Everything a reply says about branches is
 * computed here, so the page never recomputes: the branch list, a branch's experiment (the spec
 * with its ancestry's patches), comparisons at matched steps, and the ledger.
 */
import type { Experiment } from '../core/setup';
import type { StepRecord } from '../core/state';
import { ENGINE_NAME } from '../core/engine';
import { compareBranches, effectiveBatch, examplesAt, fingerprintState, Grove, type BatchSegment, type GroveOptions } from '../core/session';
import { buildLedger, groveFromOpened, LedgerOpenError, ledgerSize, openLedger } from '../ledger';
import { describePatch, recipeExcerpt, touchesSetup, type SpecPatch } from '../experiment/patch';
import type { EngineCore } from './engine-core';
import type { SpecLimits } from '../experiment/limits';
import type { BranchComparison, BranchInfo, BranchReadouts, BranchTrace, CheckpointData, SessionSummary, SpecProblem } from './protocol';
import { COMPARE_POINTS } from './protocol';
import { describeRecipe, describeSetup } from './describe';
import { DISPLAY_RECORDS, MEMORY_CHECKPOINT_CAP, MEMORY_RECORD_CAP, RECENT_RECORDS, sampleRecords } from './sampling';
import { readoutsFromLedger, readoutsForLedger } from './readouts-data';

/** Engine name written into each ledger (kept in core, beside the arithmetic it names). */
export { ENGINE_NAME };

/** Name of the root branch of a new cell. */
export const ROOT_BRANCH = 'main';

/** The grove options of a cell: its checkpoint spacing and the worker's memory bounds. */
export function groveOptions(checkpointEvery: number): GroveOptions {
  return { checkpointEvery, maxAutomatic: MEMORY_CHECKPOINT_CAP, maxRecords: MEMORY_RECORD_CAP, recentRecords: RECENT_RECORDS };
}

const emptyReadouts = (): BranchReadouts => ({ curvature: null, sharpness: [], audit: null });

/** Outcome of {@link CellGrove.fork}. */
export type ForkOutcome = { ok: true; name: string } | { ok: false; errors: SpecProblem[] };

/** One cell's branches and what they keep. */
export class CellGrove {
  readonly specText: string;
  readonly grove: Grove;
  private activeName: string;
  private readonly readouts = new Map<string, BranchReadouts>();
  private findingsList: Record<string, unknown>[];

  /** Size limits every branch's patched spec is checked against (the user's settings). */
  private limits: SpecLimits | undefined;

  private constructor(private readonly core: EngineCore, specText: string, grove: Grove, active: string, findings: Record<string, unknown>[]) {
    this.specText = specText;
    this.grove = grove;
    this.activeName = active;
    this.findingsList = findings;
  }

  /** A fresh cell: one root branch at step 0. */
  static fresh(core: EngineCore, specText: string, experiment: Experiment, checkpointEvery: number, limits?: SpecLimits): CellGrove {
    const cell = new CellGrove(core, specText, Grove.create(experiment, groveOptions(checkpointEvery), ROOT_BRANCH), ROOT_BRANCH, []);
    cell.limits = limits;
    return cell;
  }

  /**
   * Every branch of a stored ledger, each continuing bit for bit from its head (and at its
   * cursor), with its readouts; the findings carried along.
   *
   * @throws with the validator's message when the ledger cannot be read, or when a branch's
   *   patched spec no longer validates.
   */
  static fromLedger(core: EngineCore, specText: string, raw: unknown, checkpointEvery: number, limits?: SpecLimits): CellGrove {
    const opened = openLedger(raw, (spec, chain) => {
      const parsed = core.parsePatched(spec, chain, limits);
      return parsed.ok ? { ok: true, experiment: parsed.experiment } : { ok: false, message: parsed.errors.map((e) => e.message).join('; ') };
    });
    if (!opened.ok) throw new LedgerOpenError(opened.problems);
    const ledger = opened.ledger;
    const restored = groveFromOpened(opened, checkpointEvery, groveOptions(checkpointEvery));
    const cell = new CellGrove(core, ledger.spec, restored.grove, ledger.activeBranch, ledger.findings.map((f) => ({ ...f })));
    for (const b of restored.branches) cell.readouts.set(b.name, readoutsFromLedger(b.readouts));
    cell.limits = limits;
    return cell;
  }

  /** The active branch's name. */
  get active(): string {
    return this.activeName;
  }

  /** Findings carried in the ledger (plain objects). */
  get findings(): Record<string, unknown>[] {
    return this.findingsList.map((f) => ({ ...f }));
  }

  /** The patches from the root to `name`, in order (empty for the root). */
  patchChain(name: string): SpecPatch[] {
    const chain: SpecPatch[] = [];
    for (let o = this.grove.origin(name); o !== null; o = this.grove.origin(o.parent)) chain.unshift(o.patch as SpecPatch);
    return chain;
  }

  /** The readouts a branch keeps (the live object: callers update it in place). */
  readoutsOf(name: string = this.activeName): BranchReadouts {
    let r = this.readouts.get(name);
    if (r === undefined) {
      r = emptyReadouts();
      this.readouts.set(name, r);
    }
    return r;
  }

  /** Every branch as the branch bar shows it. */
  branchList(): BranchInfo[] {
    return this.grove.names().map((name) => {
      const o = this.grove.origin(name);
      const s = this.grove.session(name);
      const t = this.grove.trajectory(name);
      const at = t.find((r) => r.step === s.stepCount);
      return {
        name,
        parent: o?.parent ?? null,
        forkStep: o?.step ?? null,
        patch: { ...(o?.patch ?? {}) },
        patchText: o === null ? '' : describePatch(o.patch as SpecPatch),
        restart: o?.restart ?? false,
        step: s.stepCount,
        tip: this.grove.tip(name),
        loss: at?.loss ?? NaN,
        fingerprint: s.fingerprint(),
        recipe: describeRecipe(this.grove.experiment(name).recipe)
      };
    });
  }

  /** Summary of the active branch with the branch list. */
  summary(): SessionSummary {
    const name = this.activeName;
    const session = this.grove.session(name);
    const e = this.grove.experiment(name);
    return {
      branch: name,
      step: session.stepCount,
      tip: this.grove.tip(name),
      branches: this.branchList(),
      fingerprint: session.fingerprint(),
      parameterCount: session.objective.parameterCount,
      checkpointSteps: this.grove.checkpointSteps(name),
      recipe: describeRecipe(e.recipe),
      setup: describeSetup(e.setup)
    };
  }

  /** An even sample of the active branch's trajectory for display. */
  display(): StepRecord[] {
    return sampleRecords(this.grove.trajectory(this.activeName), DISPLAY_RECORDS);
  }

  /** Makes `name` the active branch. */
  switchTo(name: string): void {
    this.grove.session(name); // throws with the list of names when unknown
    this.activeName = name;
  }

  /**
   * Forks a branch from `from` at `step` with `patch` and makes it active. A patch that changes
   * the setup or seed forks at step 0 of the root's lineage (see `Grove.fork`).
   *
   * @returns the new name, or the problems of a patch that does not validate.
   * @throws when the step or name is refused by the grove.
   */
  fork(from: string, step: number, patch: SpecPatch, name?: string): ForkOutcome {
    this.grove.session(from);
    const chain = [...this.patchChain(from), patch];
    const parsed = this.core.parsePatched(this.specText, chain, this.limits);
    if (!parsed.ok) return { ok: false, errors: parsed.errors };
    if (touchesSetup(patch) && step !== 0) {
      return { ok: false, errors: [{ path: '', message: `the patch ${describePatch(patch)} changes the setup or the seed, so the branch must start at step 0, not step ${step}` }] };
    }
    const chosen = name ?? this.freeName(patch);
    this.grove.fork(from, step, chosen, parsed.experiment, patch);
    this.activeName = chosen;
    return { ok: true, name: chosen };
  }

  /** Renames a branch (the readouts follow). */
  rename(name: string, to: string): void {
    this.grove.rename(name, to);
    const r = this.readouts.get(name);
    this.readouts.delete(name);
    if (r !== undefined) this.readouts.set(to, r);
    if (this.activeName === name) this.activeName = to;
  }

  /** Deletes a branch with its descendants; the active branch moves to the deleted one's parent when it was among them. */
  remove(name: string): string[] {
    const parent = this.grove.origin(name)?.parent;
    const gone = this.grove.remove(name);
    for (const n of gone) this.readouts.delete(n);
    if (gone.includes(this.activeName)) this.activeName = parent ?? this.grove.root();
    return gone;
  }

  /** Drops the active branch's kept steps and the readouts measured on them. */
  discard(): number {
    const dropped = this.grove.discard(this.activeName);
    const at = this.grove.session(this.activeName).stepCount;
    const r = this.readoutsOf();
    r.sharpness = r.sharpness.filter((p) => p.step <= at);
    if (r.curvature !== null && r.curvature.step > at) r.curvature = null;
    if (r.audit !== null && r.audit.step > at) r.audit = null;
    return dropped;
  }

  /**
   * Compares branches at matched steps (core's `compareBranches`) and returns the traces the
   * comparison figures and the decision record draw.
   */
  compare(names: readonly string[], reference?: string): { comparison: BranchComparison; traces: BranchTrace[] } {
    for (const n of names) this.grove.session(n);
    const inputs = names.map((name) => ({
      name,
      trajectory: this.grove.trajectory(name),
      forkStep: this.grove.origin(name)?.step ?? null,
      batches: this.batchSegments(name),
      sharpness: this.readoutsOf(name).sharpness
    }));
    const comparison = compareBranches(inputs, { reference });
    const traces = inputs.map((input): BranchTrace => {
      const o = this.grove.origin(input.name);
      const sample = sampleRecords(input.trajectory, COMPARE_POINTS);
      const held = sample.every((r) => r.heldOutLoss !== undefined);
      const excerpt = recipeExcerpt(this.specText, this.patchChain(input.name));
      const tip = this.grove.tipState(input.name);
      const session = this.grove.session(input.name);
      return {
        name: input.name,
        parent: o?.parent ?? null,
        forkStep: o?.step ?? null,
        patchText: o === null ? '' : describePatch(o.patch as SpecPatch),
        restart: o?.restart ?? false,
        recipe: describeRecipe(this.grove.experiment(input.name).recipe),
        steps: sample.map((r) => r.step),
        examples: input.batches === null ? null : sample.map((r) => examplesAt(r.step, input.batches as BatchSegment[])),
        loss: sample.map((r) => r.loss),
        heldOut: held && sample.length > 0 ? sample.map((r) => r.heldOutLoss as number) : null,
        sharpness: input.sharpness.slice(),
        step: session.stepCount,
        fingerprint: session.fingerprint(),
        tip: tip.step,
        tipFingerprint: fingerprintOf(this.grove, input.name),
        recipeYaml: excerpt.ok ? excerpt.yaml : `# the recipe cannot be written: ${excerpt.errors.map((e) => e.message).join('; ')}\n`
      };
    });
    return { comparison, traces };
  }

  /**
   * The whole ledger of the cell: every branch (thinned and capped per branch), its patch, cursor
   * and readouts, and the findings.
   *
   * @throws LedgerError naming the field when it cannot be built.
   */
  ledger(specText: string, checkpointCap: number): { value: object; bytes: number } {
    const g = this.grove;
    const root = g.session(g.root());
    const ledger = buildLedger({
      engine: ENGINE_NAME,
      spec: specText,
      seed: g.experiment(g.root()).seed,
      parameterCount: root.objective.parameterCount,
      branches: g.names().map((name) => {
        const o = g.origin(name);
        const tip = g.tipState(name);
        const cursor = g.session(name).state();
        return {
          name,
          parent: o === null ? undefined : { branch: o.parent, step: o.step },
          patch: o === null ? undefined : { ...o.patch },
          restart: o?.restart,
          trajectory: g.trajectory(name),
          checkpoints: g.checkpoints(name).map((c) => c.state).filter((s) => s.step < tip.step),
          head: tip,
          cursor: cursor.step < tip.step ? cursor : undefined,
          readouts: readoutsForLedger(this.readoutsOf(name))
        };
      }),
      activeBranch: this.activeName,
      findings: this.findingsList,
      limits: { maxCheckpoints: Math.max(2, checkpointCap) },
      // the hash of the numbers read from data files (absent for inline data)
      ...(g.experiment(g.root()).setup.data?.origin ? { dataHash: g.experiment(g.root()).setup.data?.origin?.hash } : {})
    });
    return { value: ledger, bytes: ledgerSize(ledger).bytes };
  }

  /** The active branch's checkpoints as protocol data. */
  checkpointData(): CheckpointData[] {
    return this.grove.checkpoints(this.activeName).map((c) => ({ step: c.step, fingerprint: c.fingerprint, state: c.state }));
  }

  /**
   * Rows per update along a branch's ancestry: the root's batch up to the first fork, then each
   * descendant's from its fork step on (a branch that restarts has only its own). Null when the
   * objective has no data rows (analytic objectives).
   */
  batchSegments(name: string): BatchSegment[] | null {
    const rowCount = this.grove.session(name).objective.rowCount;
    if (rowCount === 0) return null;
    const rows = (n: string): number => effectiveBatch(this.grove.experiment(n).recipe, rowCount) || rowCount;
    const lineage: string[] = [];
    for (let n: string | null = name; n !== null; n = this.grove.origin(n)?.parent ?? null) lineage.unshift(n);
    let segments: BatchSegment[] = [];
    for (const n of lineage) {
      const o = this.grove.origin(n);
      if (o === null || o.restart) segments = [{ from: 0, rows: rows(n) }];
      else segments = [...segments.filter((s) => s.from < o.step), { from: o.step, rows: rows(n) }];
    }
    return segments;
  }

  /** A name for a new branch from its patch: `lr=0.05`, made unique with `-2`, `-3`, … */
  private freeName(patch: SpecPatch): string {
    const text = describePatch(patch).replace(/\s+/g, '').slice(0, 32) || 'branch';
    if (!this.grove.has(text)) return text;
    for (let i = 2; ; i++) if (!this.grove.has(`${text}-${i}`)) return `${text}-${i}`;
  }
}

/** Fingerprint of a branch's tip state. */
function fingerprintOf(grove: Grove, name: string): string {
  return grove.tip(name) === grove.session(name).stepCount ? grove.session(name).fingerprint() : fingerprintState(grove.tipState(name));
}
