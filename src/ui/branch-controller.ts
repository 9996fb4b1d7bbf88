/**
 * Branch actions of a cell controller: fork a branch at a step with a patch (the one path the
 * branch form and a finding's "Try as branch" share), switch, rename, delete, discard kept
 * steps, compare branches, and write the decision record below the cell. The numbers and
 * verdicts come from the worker; this class only asks, confirms where work would be lost, and
 * writes down.
 */
import { checkPatchText, type SpecPatch } from '../experiment/patch';
import type { BranchInfo } from '../worker/protocol';
import { ControllerBase, type ControllerDeps } from './cell-controller-base';
import { comparisonFigure, comparisonText, type CompareAxis } from '../figures/compare';
import { decisionRecord, RECORD_IMAGE, RECORD_KEY, recordMeta } from './decision-record';
import { IMAGE_THEME } from '../figures/trace';
import type { ReadoutTab } from './view-state';

export type { ControllerDeps } from './cell-controller-base';

/** What a new branch is: where it forks, what it changes, and (optionally) its name. */
export interface ForkRequest {
  /** Step of `from` to fork at (a setup or seed change must fork at 0). */
  atStep: number;
  /** Flat spec keys and values, e.g. `{ lr: 0.05 }` — a finding's `proposal.set` as it is. */
  set: Readonly<Record<string, unknown>>;
  /** Name of the new branch (default: made from the patch, e.g. `lr=0.05`). */
  name?: string;
  /** Branch to fork from (default: the active branch). */
  from?: string;
}

/** Most branches the comparison starts with. */
const DEFAULT_COMPARED = 4;

/** Branch actions on top of {@link ControllerBase}. */
export abstract class BranchController extends ControllerBase {
  protected constructor(deps: ControllerDeps) {
    super(deps);
  }

  /** Switches the readout tab (the comparison is fetched when its tab opens). */
  setTab(tab: ReadoutTab): void {
    this.set({ tab });
    if (tab === 'compare' && this.st.comparison.data === null && this.st.busy === null && this.st.summary !== null) void this.compare();
  }

  /** The patches from the root to `name`, from the branch list (empty for the root). */
  ancestry(name: string): SpecPatch[] {
    const byName = new Map((this.st.summary?.branches ?? []).map((b) => [b.name, b]));
    const chain: SpecPatch[] = [];
    for (let b = byName.get(name); b !== undefined && b.parent !== null; b = byName.get(b.parent)) chain.unshift(b.patch as SpecPatch);
    return chain;
  }

  /**
   * Forks a branch and makes it active: the one path for the branch form and for trying a
   * finding's proposal (`forkBranch({ atStep: p.atStep, set: p.set })`).
   *
   * @returns true when the branch exists and the ledger was written.
   */
  async forkBranch(request: ForkRequest): Promise<boolean> {
    if (this.st.specEdited) {
      this.notice('warn', 'The spec was edited since this session started: run the cell first; a branch patches the text its session belongs to.');
      return false;
    }
    // Files only the new patch names (e.g. another data.file) are read and sent with the fork.
    const from = request.from ?? this.st.summary?.branch ?? '';
    const spec = this.st.sessionSpec ?? '';
    const known = new Set(await this.fileNames(spec, [this.ancestry(from)]));
    const newFiles = (await this.fileNames(spec, [[...this.ancestry(from), { ...request.set } as SpecPatch]])).filter((n) => !known.has(n));
    const reply = await this.exchange('Making a branch', { kind: 'fork', step: request.atStep, patch: { ...request.set }, name: request.name, from: request.from }, 0, newFiles);
    if (reply === null) return false;
    if (reply.kind === 'patch-errors') {
      this.set({ branchProblems: reply.errors, notice: { level: 'error', text: `The branch was not made: ${reply.errors.map((e) => e.message).join('; ')}` } });
      return false;
    }
    if (reply.kind !== 'branched') return this.failed(reply);
    this.applyView(reply);
    const made = reply.summary.branch;
    const names = this.st.comparison.names.filter((n) => n !== made);
    const parent = reply.summary.branches.find((b) => b.name === made)?.parent;
    if (parent && !names.includes(parent)) names.push(parent);
    this.set({
      form: null,
      branchProblems: [],
      comparison: { ...this.st.comparison, names: [...names, made], data: null },
      notice: { level: 'info', text: `Branch ${made} made at step ${reply.summary.step}; step it to compare with ${parent ?? 'its parent'}.` }
    });
    return this.persist();
  }

  /**
   * "Try as branch" on finding `index` of the shown branch: switches to the branch that already
   * tried its proposal, else forks one from the shown branch at the proposal's step with its keys
   * (`forkBranch`) and shows it.
   *
   * @returns true when the branch is shown and the ledger written.
   */
  async tryFinding(index: number): Promise<boolean> {
    const f = this.st.diagnosis.findings[index];
    const from = this.st.summary?.branch;
    if (f === undefined || f.proposal === null || from === undefined) return false;
    const tried = this.st.diagnosis.derived.tried[index] ?? null;
    if (tried !== null) {
      const ok = await this.switchBranch(tried);
      if (ok) this.notice('info', `Branch ${tried} already tries this proposal of ${f.id}; it is shown now.`);
      return ok;
    }
    const p = f.proposal;
    if (!(await this.forkBranch({ atStep: p.atStep, set: p.set, from }))) return false;
    const made = this.st.summary?.branch ?? '';
    this.notice('info', `Trying the proposal of ${f.id}: branch ${made} from step ${p.atStep} of ${from} with ${Object.entries(p.set).map(([k, v]) => `${k}=${String(v)}`).join(', ')}. Step it to see whether it fixes what ${from} shows; the Compare tab overlays both.`);
    return true;
  }

  /** Checks the branch form's patch text as it is typed (problems carry lines of the patch text). */
  checkBranchForm(text: string, from = this.st.summary?.branch ?? ''): void {
    const spec = this.st.sessionSpec;
    if (spec === null) return;
    const r = checkPatchText(spec, this.ancestry(from), text);
    this.set({ branchProblems: r.ok ? [] : r.errors });
  }

  /** Submits the branch form: checks the patch text, then forks from the active branch at `step`. */
  async submitBranchForm(text: string, step: number, name: string): Promise<boolean> {
    const spec = this.st.sessionSpec;
    const from = this.st.summary?.branch;
    if (spec === null || from === undefined) return false;
    const r = checkPatchText(spec, this.ancestry(from), text);
    if (!r.ok) {
      this.set({ branchProblems: r.errors });
      return false;
    }
    return this.forkBranch({ atStep: step, set: r.patch, name: name.trim() === '' ? undefined : name.trim(), from });
  }

  /** Makes `name` the active branch. */
  async switchBranch(name: string): Promise<boolean> {
    if (name === this.st.summary?.branch) return true;
    const reply = await this.exchange(`Switching to ${name}`, { kind: 'switch', branch: name });
    if (reply === null) return false;
    if (reply.kind !== 'branched') return this.failed(reply);
    this.applyView(reply);
    this.set({ notice: null, msPerStep: undefined, msBelow: undefined });
    return this.persist();
  }

  /** Renames a branch (comparison and record follow). */
  async renameBranch(name: string, to: string): Promise<boolean> {
    const reply = await this.exchange(`Renaming ${name}`, { kind: 'rename', branch: name, to: to.trim() });
    if (reply === null) return false;
    if (reply.kind !== 'branched') return this.failed(reply);
    this.applyView(reply);
    const names = this.st.comparison.names.map((n) => (n === name ? to.trim() : n));
    this.set({ form: null, notice: null, comparison: { ...this.st.comparison, names, data: null } });
    return this.persist();
  }

  /** The branches forked from `name`, directly or not (from the branch list). */
  descendants(name: string): string[] {
    const all: BranchInfo[] = this.st.summary?.branches ?? [];
    const out: string[] = [];
    for (const b of all) if (b.parent !== null && (b.parent === name || out.includes(b.parent))) out.push(b.name);
    return out;
  }

  /** Deletes a branch and its descendants, after a confirmation unless `force`. */
  async deleteBranch(name: string, force = false): Promise<boolean> {
    const info = this.st.summary?.branches.find((b) => b.name === name);
    if (info === undefined) return false;
    if (info.parent === null) {
      this.notice('error', `'${name}' is the root branch (the spec as written) and cannot be deleted; Reset starts the whole cell over.`);
      return false;
    }
    if (!force) {
      const more = this.descendants(name);
      const also = more.length > 0 ? ` and the ${more.length} branch${more.length > 1 ? 'es' : ''} forked from it (${more.join(', ')})` : '';
      this.askConfirm({ kind: 'delete', branch: name, text: `Delete branch ${name}${also}? Their ${info.tip - (info.forkStep ?? 0)}+ steps are lost.` });
      return false;
    }
    const reply = await this.exchange(`Deleting ${name}`, { kind: 'delete', branch: name });
    if (reply === null) return false;
    if (reply.kind !== 'branched') return this.failed(reply);
    this.applyView(reply);
    const gone = new Set(reply.removed ?? []);
    this.set({ notice: { level: 'info', text: `Deleted ${[...gone].join(', ')}.` }, comparison: { ...this.st.comparison, names: this.st.comparison.names.filter((n) => !gone.has(n)), data: null } });
    return this.persist();
  }

  /** Drops the steps the active branch keeps after its cursor, after a confirmation unless `force`. */
  async discardLater(force = false): Promise<boolean> {
    const s = this.st.summary;
    if (s === null || s.step === s.tip) return false;
    if (!force) {
      this.askConfirm({ kind: 'discard', text: `Discard steps ${s.step + 1}–${s.tip} of ${s.branch}? They are kept now; stepping on would replay them.` });
      return false;
    }
    const reply = await this.exchange('Discarding later steps', { kind: 'discard' });
    if (reply === null) return false;
    if (reply.kind !== 'branched') return this.failed(reply);
    this.applyView(reply);
    this.set({ notice: { level: 'info', text: `Dropped ${reply.dropped ?? 0} kept steps; ${reply.summary.branch} ends at step ${reply.summary.step}.` } });
    return this.persist();
  }

  /** Carries out the pending confirmation. */
  async confirm(): Promise<boolean> {
    const c = this.st.confirm;
    this.set({ confirm: null });
    if (c === null) return false;
    switch (c.kind) {
      case 'reset':
        return this.resetConfirmed();
      case 'delete':
        return this.deleteBranch(c.branch, true);
      case 'discard':
        return this.discardLater(true);
      case 'replace-record':
        return this.writeDecisionRecord(c.question, c.chosen, true);
      case 'replace-ledger':
        return this.replaceUnreadable(false);
    }
  }

  /** Replaces an unreadable ledger with a new session, keeping a copy of it when asked. */
  abstract replaceUnreadable(keepCopy: boolean): Promise<boolean>;

  /** Starts over from the editor's text without asking (after a confirmation). */
  protected abstract resetConfirmed(): Promise<boolean>;

  /** Chooses the branches to compare (the first is the reference) and fetches the comparison. */
  setCompared(names: string[]): Promise<boolean> {
    this.set({ comparison: { ...this.st.comparison, names, data: null } });
    return this.compare();
  }

  /** Shows the loss overlay by step or by examples drawn. */
  setCompareAxis(axis: CompareAxis): void {
    this.set({ comparison: { ...this.st.comparison, axis } });
  }

  /** The branches compared by default: the chosen ones that still exist, else the active branch's lineage and siblings, at most four. */
  comparedNames(): string[] {
    const all = this.st.summary?.branches ?? [];
    const known = this.st.comparison.names.filter((n) => all.some((b) => b.name === n));
    if (known.length > 0) return known;
    return all.slice(0, DEFAULT_COMPARED).map((b) => b.name);
  }

  /** Asks the worker to compare the chosen branches at matched steps. */
  async compare(): Promise<boolean> {
    const names = this.comparedNames();
    if (names.length === 0) return false;
    const reply = await this.exchange('Comparing branches', { kind: 'compare', branches: names });
    if (reply === null) return false;
    if (reply.kind !== 'comparison') return this.failed(reply);
    const batchOnly = reply.batchOnly ?? null;
    // Branches that differ only in batch size compare fairly by examples seen: shown so at once.
    const axis = batchOnly !== null && (this.st.comparison.data?.batchOnly ?? null) === null ? 'examples' : this.st.comparison.axis;
    this.set({ comparison: { ...this.st.comparison, axis, names, data: { comparison: reply.comparison, traces: reply.traces, batchOnly } } });
    return true;
  }

  /**
   * Writes the decision record directly below the cell (see `decision-record.ts`): the compared
   * branches (the chosen one included), numbers fetched fresh from the worker, the figure as an
   * attachment. An existing record of this cell is replaced in place — after a confirmation
   * unless `replace`.
   */
  async writeDecisionRecord(question: string, chosen: string, replace = false): Promise<boolean> {
    const q = question.trim();
    if (q === '') {
      this.notice('error', 'Write the question the record answers (e.g. "Which learning rate keeps the calibration stable?").');
      return false;
    }
    if (!replace && this.deps.host.findRecord() !== null) {
      this.askConfirm({ kind: 'replace-record', question: q, chosen, text: 'This cell already has a decision record. Replace it with a new one? (Other cells are not touched.)' });
      return false;
    }
    const names = this.comparedNames();
    if (!names.includes(chosen)) this.set({ comparison: { ...this.st.comparison, names: [...names, chosen], data: null } });
    if (!(await this.compare())) return false;
    const data = this.st.comparison.data;
    if (data === null) return false;
    const axis = this.st.comparison.axis;
    const figureText = comparisonText(data.traces, axis);
    const image = this.deps.imageOf ? await this.deps.imageOf(comparisonFigure(data.traces, axis, IMAGE_THEME, { width: 720, height: 320 })) : null;
    const input = { question: q, chosen, comparison: data.comparison, traces: data.traces, image: image === null ? null : RECORD_IMAGE, figureText };
    let source: string;
    try {
      source = decisionRecord(input);
    } catch (error) {
      this.notice('error', `The decision record was not written: ${(error as Error).message}`);
      return false;
    }
    this.deps.host.writeRecord({
      source,
      attachments: image === null ? {} : { [RECORD_IMAGE]: { [image.mime]: image.data } },
      metadata: { [RECORD_KEY]: recordMeta(this.deps.host.cellId(), input) }
    });
    this.set({ form: null, notice: { level: 'info', text: `Decision record written below the cell (chosen: ${chosen}).` } });
    return true;
  }
}
