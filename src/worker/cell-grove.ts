/**
 * The worker's view of one stepwell cell: its spec text, the core {@link Grove} of branches, the
 * active branch, and the readouts and findings each branch keeps ({@link BranchBook}).
 * Everything a reply says about branches is computed here, so the page never recomputes: the
 * branch list, a branch's experiment (the spec with its ancestry's patches), its diagnosis,
 * comparisons at matched steps, and the ledger.
 */
import type { Experiment } from '../core/setup';
import type { StepRecord } from '../core/state';
import { ENGINE_NAME } from '../core/engine';
import { compareBranches, effectiveBatch, examplesAt, fingerprintState, Grove, Session, type BatchSegment, type GroveOptions } from '../core/session';
import { buildLedger, decodeFindings, groveFromOpened, LedgerOpenError, ledgerSize, openLedger } from '../ledger';
import { describePatch, recipeExcerpt, touchesSetup, type SpecPatch } from '../experiment/patch';
import type { CellFiles, EngineCore } from './engine-core';
import { specProblemAt, usedFiles } from '../experiment';
import type { SpecLimits } from '../experiment/limits';
import type { BranchComparison, BranchInfo, BranchReadouts, BranchTrace, CheckpointData, SessionSummary, SpecProblem } from './protocol';
import { COMPARE_POINTS } from './protocol';
import { describeRecipe, describeSetup } from './describe';
import { DISPLAY_RECORDS, MEMORY_CHECKPOINT_CAP, MEMORY_RECORD_CAP, RECENT_RECORDS, sampleRecords } from './sampling';
import { findingsOf, readoutsFromLedger, readoutsForLedger } from './readouts-data';
import { BranchBook } from './branch-book';

/** Engine name written into each ledger (kept in core, beside the arithmetic it names). */
export { ENGINE_NAME };

/**
 * The saved session cannot be resumed as it stands: the files it read changed, or cannot be read
 * now. `problems` sit at the spec keys that name the files (the cell shows them at their lines).
 */
export class SpecProblemsError extends Error {
  constructor(readonly problems: SpecProblem[]) {
    super(problems.map((p) => p.message).join('; '));
    this.name = 'SpecProblemsError';
  }
}

const NO_FILES: CellFiles = { files: new Map(), problems: new Map() };

/** Name of the root branch of a new cell. */
export const ROOT_BRANCH = 'main';

/** The grove options of a cell: its checkpoint spacing and the worker's memory bounds. */
export function groveOptions(checkpointEvery: number): GroveOptions {
  return { checkpointEvery, maxAutomatic: MEMORY_CHECKPOINT_CAP, maxRecords: MEMORY_RECORD_CAP, recentRecords: RECENT_RECORDS };
}

/** Outcome of {@link CellGrove.fork}. */
export type ForkOutcome = { ok: true; name: string } | { ok: false; errors: SpecProblem[] };

/** One cell's branches and what they keep. */
export class CellGrove {
  readonly specText: string;
  readonly grove: Grove;
  /** The files the spec and its branches name, as the page read them (forks may add more). */
  private readonly files: { files: Map<string, Uint8Array>; problems: Map<string, string> };
  private activeName: string;
  /** Readouts and findings per branch. */
  readonly book: BranchBook;

  /** Size limits every branch's patched spec is checked against (the user's settings). */
  private limits: SpecLimits | undefined;

  private constructor(private readonly core: EngineCore, specText: string, grove: Grove, active: string, files: CellFiles) {
    this.specText = specText;
    this.files = { files: new Map(files.files), problems: new Map(files.problems) };
    this.grove = grove;
    this.activeName = active;
    this.book = new BranchBook(grove);
  }

  /** A fresh cell: one root branch at step 0, diagnosed there. */
  static fresh(core: EngineCore, specText: string, experiment: Experiment, checkpointEvery: number, files: CellFiles = NO_FILES, limits?: SpecLimits): CellGrove {
    const cell = new CellGrove(core, specText, Grove.create(experiment, groveOptions(checkpointEvery), ROOT_BRANCH), ROOT_BRANCH, files);
    cell.limits = limits;
    cell.book.diagnose(ROOT_BRANCH);
    return cell;
  }

  /**
   * Every branch of a stored ledger, each continuing bit for bit from its head (and at its
   * cursor), with its readouts and findings as stored; a branch stored without a diagnosis (a
   * ledger of version 2) is diagnosed now.
   *
   * @throws with the validator's message when the ledger cannot be read, or when a branch's
   *   patched spec no longer validates; a {@link SpecProblemsError} when the spec's files cannot
   *   be read or changed since the ledger was written (a changed file is never replayed silently).
   */
  static fromLedger(core: EngineCore, specText: string, raw: unknown, checkpointEvery: number, files: CellFiles = NO_FILES, limits?: SpecLimits): CellGrove {
    const open = (withoutFiles: boolean): ReturnType<typeof openLedger> =>
      openLedger(raw, (spec, chain) => {
        const parsed = core.parsePatched(spec, chain, files, limits);
        if (parsed.ok) return { ok: true, experiment: parsed.experiment, withoutFiles };
        // the root's spec failing on its files (missing, unreadable) is shown at the keys that name them
        if (chain.length === 0) throw new SpecProblemsError(parsed.errors);
        return { ok: false, message: parsed.errors.map((e) => e.message).join('; ') };
      });
    const opened = open(false);
    if (!opened.ok) {
      // A data or weights file replaced since the save also fails the step-0 checks: name the file
      // at its key when that is all that differs.
      const apart = files.files.size > 0 ? open(true) : null;
      let changed: SpecProblem[] = [];
      if (apart?.ok === true) {
        try {
          changed = changedFiles(apart.ledger.spec, apart.ledger.dataHash, groveFromOpened(apart, checkpointEvery, groveOptions(checkpointEvery)).grove);
        } catch {
          // the ledger has other problems too: report those
        }
      }
      if (changed.length > 0) throw new SpecProblemsError(changed);
      throw new LedgerOpenError(opened.problems);
    }
    const ledger = opened.ledger;
    const restored = groveFromOpened(opened, checkpointEvery, groveOptions(checkpointEvery));
    const changed = changedFiles(ledger.spec, ledger.dataHash, restored.grove);
    if (changed.length > 0) throw new SpecProblemsError(changed);
    const cell = new CellGrove(core, ledger.spec, restored.grove, ledger.activeBranch, files);
    cell.limits = limits;
    const findings = decodeFindings(ledger.findings);
    for (const b of restored.branches) cell.book.set(b.name, readoutsFromLedger(b.readouts, findingsOf(findings, b.name)));
    for (const b of restored.branches) if (!cell.book.diagnosed(b.name)) cell.book.diagnose(b.name);
    return cell;
  }

  /** The files the cell read (bytes and problems by name). */
  get cellFiles(): CellFiles {
    return this.files;
  }

  /** The active branch's name. */
  get active(): string {
    return this.activeName;
  }

  /** The patches from the root to `name`, in order (empty for the root). */
  patchChain(name: string): SpecPatch[] {
    const chain: SpecPatch[] = [];
    for (let o = this.grove.origin(name); o !== null; o = this.grove.origin(o.parent)) chain.unshift(o.patch as SpecPatch);
    return chain;
  }

  /** The readouts a branch keeps (the live object: callers update it in place). */
  readoutsOf(name: string = this.activeName): BranchReadouts {
    return this.book.of(name);
  }

  /** A branch's readouts for a reply: a copy with the derived readouts (layer balance, generalization, the sharpness verdict). */
  readoutsView(name: string = this.activeName): BranchReadouts {
    return this.book.view(name);
  }

  /** Re-evaluates a branch's findings at its cursor (see {@link BranchBook.diagnose}). */
  diagnose(name: string = this.activeName): void {
    this.book.diagnose(name);
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
  fork(from: string, step: number, patch: SpecPatch, name?: string, more?: CellFiles): ForkOutcome {
    this.grove.session(from);
    if (more !== undefined) {
      for (const [n, b] of more.files) this.files.files.set(n, b);
      for (const [n, m] of more.problems) if (!this.files.files.has(n)) this.files.problems.set(n, m);
    }
    const chain = [...this.patchChain(from), patch];
    const parsed = this.core.parsePatched(this.specText, chain, this.files, this.limits);
    if (!parsed.ok) return { ok: false, errors: parsed.errors };
    if (touchesSetup(patch) && step !== 0) {
      return { ok: false, errors: [{ path: '', message: `the patch ${describePatch(patch)} changes the setup or the seed, so the branch must start at step 0, not step ${step}` }] };
    }
    const chosen = name ?? this.freeName(patch);
    this.grove.fork(from, step, chosen, parsed.experiment, patch);
    this.activeName = chosen;
    this.book.diagnose(chosen);
    return { ok: true, name: chosen };
  }

  /** Renames a branch (the readouts follow). */
  rename(name: string, to: string): void {
    this.grove.rename(name, to);
    this.book.rename(name, to);
    if (this.activeName === name) this.activeName = to;
  }

  /** Deletes a branch with its descendants; the active branch moves to the deleted one's parent when it was among them. */
  remove(name: string): string[] {
    const parent = this.grove.origin(name)?.parent;
    const gone = this.grove.remove(name);
    this.book.remove(gone);
    if (gone.includes(this.activeName)) this.activeName = parent ?? this.grove.root();
    return gone;
  }

  /** Drops the active branch's kept steps and the readouts measured on them. */
  discard(): number {
    const dropped = this.grove.discard(this.activeName);
    this.book.dropAfter(this.activeName, this.grove.session(this.activeName).stepCount);
    this.book.diagnose(this.activeName);
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
        recipeYaml: excerpt.ok ? excerpt.yaml : `# the recipe cannot be written: ${excerpt.errors.map((e) => e.message).join('; ')}\n`,
        findings: this.book.of(input.name).findings.slice(),
        tried: this.book.tried(input.name)
      };
    });
    return { comparison, traces };
  }

  /**
   * The whole ledger of the cell: every branch (thinned and capped per branch), its patch, cursor
   * and readouts, and every branch's findings tagged with its name.
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
          readouts: readoutsForLedger(this.readoutsOf(name)),
          files: usedFiles(g.experiment(name))
        };
      }),
      activeBranch: this.activeName,
      findings: this.book.taggedFindings(),
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

  /**
   * A name for a new branch from its patch: `lr=0.05`; when that is longer than 32 characters,
   * each key by its last part (`init=lecun-normal,gain=1`); made unique with `-2`, `-3`, …
   */
  private freeName(patch: SpecPatch): string {
    const full = describePatch(patch).replace(/\s+/g, '');
    const short = Object.entries(patch).map(([k, v]) => `${k.split('.').pop() ?? k}=${String(v)}`).join(',').replace(/\s+/g, '');
    const text = (full.length <= 32 ? full : short).slice(0, 32) || 'branch';
    if (!this.grove.has(text)) return text;
    for (let i = 2; ; i++) if (!this.grove.has(`${text}-${i}`)) return `${text}-${i}`;
  }
}

/** Fingerprint of a branch's tip state. */
function fingerprintOf(grove: Grove, name: string): string {
  return grove.tip(name) === grove.session(name).stepCount ? grove.session(name).fingerprint() : fingerprintState(grove.tipState(name));
}

/** The whole files problem of a key, placed in the spec text. */
const at = (specText: string, path: (string | number)[], message: string): SpecProblem => specProblemAt(specText, path, message);

/**
 * What changed in the files a restored grove read, against what its ledger recorded: the data's
 * hash (`dataHash`, over the numbers used) and the initial weights (the root's step-0 checkpoint
 * against a fresh session from the weights file now). Empty when nothing changed.
 */
function changedFiles(specText: string, recorded: string | undefined, grove: Grove): SpecProblem[] {
  const root = grove.root();
  const e = grove.experiment(root);
  const out: SpecProblem[] = [];
  const origin = e.setup.data?.origin;
  const now = origin?.hash;
  if ((recorded ?? null) !== (now ?? null)) {
    const names = origin?.files.map((f) => f.name).join(', ') ?? 'the data';
    const was = recorded === undefined ? 'no data hash (the data were inline)' : `data hash ${recorded.slice(0, 12)}…`;
    out.push(at(specText, ['data', 'file'], `${names} changed since this session was saved: the ledger recorded ${was}, the data now hash to ${now === undefined ? 'nothing' : `${now.slice(0, 12)}…`}. The saved steps were made with the old data and are not replayed on the new: put the old file back, or Reset to start over from the data as they are now (stepwell verify names the first differing step)`));
  }
  const model = e.setup.model;
  if (model.kind === 'network' && model.weightsOrigin !== undefined) {
    const first = grove.checkpoints(root).find((c) => c.step === 0);
    if (first !== undefined && first.fingerprint !== Session.create(e).fingerprint()) {
      out.push(at(specText, ['model', 'weights', 'file'], `${model.weightsOrigin.name} changed since this session was saved: the initial weights it holds now are not the ones the saved steps started from. Put the old file back, or Reset to start over from the weights as they are now`));
    }
  }
  return out;
}
