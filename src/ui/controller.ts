/**
 * The controller of one stepwell cell: reads the ledger, drives the engine, keeps the view
 * state, and writes the whole ledger back after each completed action. No DOM and no JupyterLab
 * imports; views subscribe to {@link CellController.changed}. Branch actions (fork, switch,
 * rename, delete, compare) and the decision record are in {@link BranchController}, which this
 * class extends.
 *
 * Running the cell (Shift+Enter) is deterministic: with problems in the text nothing runs and
 * the session shown stays; with the text the session belongs to, the session goes on unchanged;
 * with any other text a new session starts at step 0 — after a confirmation when steps or
 * branches would be lost.
 */
import type { StepRecord } from '../core/state';
import type { RequestBody } from '../worker/client';
import type { StopCondition } from '../worker/protocol';
import { RECENT_RECORDS, thinInPlace } from '../worker/sampling';
import { BranchController, type ControllerDeps } from './branch-controller';
import { readNumber } from './forms';
import { errorMarkdown, meanMs, msBound, problemLine, TIMING_WINDOW, verifyLines } from './summary';
import type { Notice } from './view-state';
import { diagnosisOf, mergeSharpness } from './view-state';
import { conditionProblem, conditionText } from './forms';
import { choiceOfKept, DEEPER_LABELS, deeperRequestOf, type DeeperChoice } from './deeper-form';

export type { ControllerDeps } from './branch-controller';

/** The metadata key under which "Keep a copy" moves an unreadable ledger. */
export const UNREADABLE_KEY = 'stepwell-unreadable';

/** Drives one stepwell cell. */
export class CellController extends BranchController {
  /** @param deps - the cell, engine factory, ledger glue, spec checker, settings and image maker. */
  constructor(deps: ControllerDeps) {
    super(deps);
    this.readLedger();
  }

  /** Steps of "Step ×N": the box's N when it holds a whole number ≥ 1, else the settings' default. */
  get defaultN(): number {
    const n = readNumber(this.st.stepN, 'N', true, 1);
    return typeof n === 'number' ? n : this.deps.settings().defaultN;
  }

  /** Sets the text of the Step ×N box (the button, the tracking button and Alt+Shift+S all use it). */
  setStepN(text: string): void {
    this.set({ stepN: text });
  }

  /**
   * Runs the cell (Shift+Enter); see the module comment for the rule.
   *
   * @param force - start over without asking (after a confirmation), or replace an unreadable ledger.
   * @returns true when the cell now holds a session for its text.
   */
  async run(force = false): Promise<boolean> {
    if (this.st.busy !== null) {
      this.notice('warn', `Busy with ${this.st.busy.action}: stop it first.`);
      return false;
    }
    const source = this.deps.host.readSource();
    const got = this.specFacts(source);
    const { problems, files } = got instanceof Promise ? await got : got;
    this.set({ problems, specEdited: this.st.sessionSpec !== null && source !== this.st.sessionSpec });
    if (problems.length > 0) {
      if (this.st.summary === null) this.deps.host.writeOutputs(null, errorMarkdown(problems.map(problemLine)));
      const count = `${problems.length} problem${problems.length > 1 ? 's' : ''}`;
      this.notice('error', this.st.summary === null
        ? `The spec has ${count} (listed above); nothing was run.`
        : `The spec has ${count} (listed above); nothing was run. The readouts still show the session of the previous text, at step ${this.st.summary.step}.`);
      return false;
    }
    if (this.st.ledger === 'reading') {
      this.notice('info', 'The saved ledger is still being read; run the cell again in a moment.');
      return false;
    }
    if (this.st.ledger === 'corrupt' && !force) {
      // Shown in the cell even when it had no output; the stored value stays as it is.
      this.writeUnreadable();
      this.notice('error', `The saved ledger cannot be read: ${this.st.ledgerMessage ?? 'unknown problem'}. Nothing was run and nothing was changed; press "Start over" to replace it with a new session.`);
      return false;
    }
    if (this.st.ledger === 'ok' && this.st.sessionSpec === source) {
      this.writeOutputs();
      return true;
    }
    if (!force && this.askBeforeLosingWork('The spec changed. Running it starts a new session at step 0 from the new text')) return false;
    return this.loadFresh(source, files);
  }

  /**
   * Discards every branch and starts again at step 0 from the editor's current text; asks first
   * (see {@link CellViewState.confirm}) when steps or branches would be lost, unless `force`.
   */
  async reset(force = false): Promise<boolean> {
    if (this.st.busy !== null) return false;
    const source = this.deps.host.readSource();
    const got = this.specFacts(source);
    const { problems, files } = got instanceof Promise ? await got : got;
    if (problems.length > 0) {
      this.set({ problems, notice: { level: 'error', text: 'Fix the spec before resetting; nothing was changed.' } });
      return false;
    }
    if (this.st.ledger === 'reading') return false;
    if (this.st.ledger === 'corrupt' && !force) {
      const canKeep = this.deps.host.keepAside !== undefined;
      this.askConfirm({
        kind: 'replace-ledger',
        canKeep,
        text: `The saved ledger cannot be read. Starting over replaces it with a new session at step 0 from the spec text${canKeep ? `; "Keep a copy" first moves the unreadable value to the cell's metadata key '${UNREADABLE_KEY}'` : ''}. Start over?`
      });
      return false;
    }
    if (!force && this.askBeforeLosingWork('Reset starts a new session at step 0 from the spec text')) return false;
    return this.loadFresh(source, files);
  }

  /**
   * Replaces an unreadable ledger with a new session (after the user's yes); with `keepCopy` the
   * unreadable value is first moved under {@link UNREADABLE_KEY} of the same cell.
   */
  async replaceUnreadable(keepCopy: boolean): Promise<boolean> {
    this.set({ confirm: null });
    if (keepCopy && this.deps.host.keepAside !== undefined) {
      const key = this.deps.host.keepAside(this.deps.host.readLedger());
      this.notice('info', `The unreadable ledger was kept under the cell's metadata key '${key}'.`);
    }
    const source = this.deps.host.readSource();
    const ok = await this.loadFresh(source);
    if (ok && keepCopy) this.notice('info', `Started over; the unreadable ledger is kept under the cell's metadata key '${UNREADABLE_KEY}' (delete it there when it is no longer needed).`);
    return ok;
  }

  /** Advances `n` optimizer steps on the active branch (default: {@link defaultN}). */
  step(n = this.defaultN): Promise<boolean> {
    return this.stepping(`Step ×${n}`, { kind: 'step', n }, n);
  }

  /** Advances `n` steps measuring the sharpness about 50 times along the way (and at the start). */
  trackSharpness(n = this.defaultN): Promise<boolean> {
    const every = Math.max(1, Math.round(n / 50));
    return this.stepping(`Step ×${n} tracking λmax`, { kind: 'step', n, sharpnessEvery: every }, n);
  }

  /** Steps until `condition` holds, at most `maxSteps` steps (says so when the cap ends it first). */
  runUntil(condition: StopCondition, maxSteps: number): Promise<boolean> {
    const problem = conditionProblem(condition);
    if (problem !== null) {
      this.notice('error', `Run until: ${problem}. Nothing was run.`);
      return Promise.resolve(false);
    }
    this.set({ runUntil: { condition, maxSteps }, form: null });
    return this.stepping(`Run until (max ${maxSteps})`, { kind: 'run-until', condition, maxSteps }, maxSteps);
  }

  private async stepping(action: string, body: RequestBody, total: number): Promise<boolean> {
    if (this.st.busy !== null) return false;
    if (this.st.specEdited) {
      this.notice('warn', 'The spec was edited since this session started: run the cell to start from the new text, or undo the edit to continue.');
      return false;
    }
    const engine = await this.syncEngine();
    if (engine === null) return false;
    // Only the newest records are kept for the timing; a long run would otherwise hold all of them.
    const produced: StepRecord[] = [];
    this.set({ busy: { action, done: 0, total }, notice: null, verify: null, confirm: null });
    let marked = false;
    const reply = await engine.request(body, p => {
      // Steps exist that the notebook does not hold yet: a reload must ask (the ledger is written at the end).
      if (!marked && p.records.length > 0) {
        marked = true;
        this.deps.host.markDirty?.();
      }
      for (const r of p.records.slice(-RECENT_RECORDS)) produced.push(r);
      if (produced.length > 2 * RECENT_RECORDS) produced.splice(0, produced.length - RECENT_RECORDS);
      this.set({
        busy: { action, done: p.done, total },
        trajectory: thinInPlace(this.st.trajectory.concat(p.records.filter(r => r.step > this.lastStep()))),
        sharpness: mergeSharpness(this.st.sharpness, p.sharpness),
        // Findings refreshed by the worker about once a second of work.
        ...(p.readouts === undefined ? {} : { diagnosis: diagnosisOf(p.readouts) })
      });
    });
    if (reply.kind !== 'stepped') {
      this.set({ busy: null });
      return this.failed(reply);
    }
    for (const r of reply.records) produced.push(r);
    const last = reply.records.length > 0 ? reply.records[reply.records.length - 1] : undefined;
    let notice: Notice | null = null;
    switch (reply.reason) {
      case 'stopped':
        notice = { level: 'info', text: `Stopped at step ${reply.summary.step}.` };
        break;
      case 'non-finite':
        notice = {
          level: 'error',
          text: reply.nonFinite !== undefined
            ? `The loss became non-finite (${String(reply.nonFinite.loss)}) at step ${reply.nonFinite.step}: the recipe diverged. That step was not kept: the branch stays at step ${reply.summary.step}, its last finite state. Rewind, or make a branch with a changed recipe.`
            : `The loss became non-finite at step ${last?.step ?? reply.summary.step}: the recipe diverged. Rewind, or make a branch with a changed recipe.`
        };
        break;
      case 'condition':
        notice = { level: 'info', text: `Condition met at step ${reply.summary.step}.` };
        break;
      case 'done':
        // A run-until that used up its cap says so: it stopped without the condition holding.
        if (body.kind === 'run-until') {
          notice = { level: 'warn', text: `Stopped at step ${reply.summary.step} after the most steps allowed (${body.maxSteps}); the condition (${conditionText(body.condition)}) was not met.` };
        }
        break;
    }
    const trajectory = thinInPlace(this.st.trajectory.concat(reply.records.filter(r => r.step > this.lastStep())));
    // The branch's last records, as after a reload (the shown trace may be thinned; this run's own records are not).
    const recent = (produced.length >= TIMING_WINDOW ? produced : trajectory).slice(-TIMING_WINDOW);
    // The worker builds the ledger while the page draws the step.
    const saving = this.requestLedger();
    this.set({
      busy: null,
      summary: reply.summary,
      trajectory,
      sharpness: reply.readouts.sharpness,
      diagnosis: diagnosisOf(reply.readouts),
      ...this.timing(meanMs(recent), msBound(recent)),
      notice
    });
    return this.persist(saving);
  }

  /** The last step of the displayed trace (re-stepped kept steps are already in it). */
  /** The status line's timing after a stepping action: its measured mean, else the bound its too-fast steps set, else the previous one. */
  private timing(measured: number | undefined, bound: number | undefined): { msPerStep?: number; msBelow?: number } {
    if (measured !== undefined) return { msPerStep: measured, msBelow: undefined };
    if (bound !== undefined) return { msPerStep: undefined, msBelow: bound };
    return { msPerStep: this.st.msPerStep, msBelow: this.st.msBelow };
  }

  private lastStep(): number {
    const t = this.st.trajectory;
    return t.length > 0 ? t[t.length - 1].step : -1;
  }

  /**
   * Moves the active branch to `step` (any step up to its furthest), replaying from the nearest
   * saved state. The later steps are kept: stepping on with the same recipe walks through them
   * again; {@link discardLater} drops them.
   */
  async rewind(step: number): Promise<boolean> {
    this.set({ form: null });
    const reply = await this.exchange(`Go to step ${step}`, { kind: 'rewind', step });
    if (reply === null) return false;
    if (reply.kind !== 'rewound') return this.failed(reply);
    this.applyView(reply);
    const s = reply.summary;
    this.set({ notice: s.step < s.tip ? { level: 'info', text: `At step ${s.step}; the steps up to ${s.tip} are kept. Stepping on replays them; "Discard later steps" drops them.` } : null });
    return this.persist();
  }

  /** Runs the gradient audit at the current parameters of the active branch. */
  async audit(): Promise<boolean> {
    const reply = await this.exchange('Gradient audit', { kind: 'gradcheck', sample: this.deps.settings().auditSample });
    if (reply === null) return false;
    if (reply.kind !== 'audit') return this.failed(reply);
    this.applyReadouts(reply.readouts);
    this.set({ tab: 'audit' });
    return this.persist();
  }

  /** Measures the gradient noise scale at the active branch's step (shown on the Data tab, which opens unless `showTab` is false). */
  async measureNoise(showTab = true): Promise<boolean> {
    const reply = await this.exchange('Measuring the gradient noise scale', { kind: 'noise', sample: this.deps.settings().noiseSample });
    if (reply === null) return false;
    if (reply.kind !== 'noise') return this.failed(reply);
    this.applyReadouts(reply.readouts);
    if (showTab) this.set({ tab: 'data' });
    return this.persist();
  }

  /** Measures the Hessian spectrum and the recipe's stability limit at the active branch's step. */
  async measureCurvature(): Promise<boolean> {
    const { eigenCount, denseHessianLimit } = this.deps.settings();
    const before = this.st.curvature;
    // On a large model the top end arrives first and is shown at once, marked as partial.
    const reply = await this.exchange('Measuring curvature', { kind: 'curvature', k: eigenCount, denseLimit: denseHessianLimit }, 0, [], p => {
      if (p.curvature !== undefined) this.set({ curvature: p.curvature, tab: 'curvature' });
    });
    if (reply === null) return false;
    if (reply.kind !== 'curvature') {
      this.set({ curvature: before });
      return this.failed(reply);
    }
    // Stopped: the branch's readouts still hold the previous readout (or none), which replaces the partial top end.
    this.applyReadouts(reply.readouts);
    if (reply.stopped) {
      const kept = reply.readouts.curvature;
      this.notice('info', `Curvature readout stopped: the partial result was discarded${kept === null ? '' : ` (the one taken at step ${kept.step} is still shown)`}.`);
      return false;
    }
    this.set({ tab: 'curvature' });
    return this.persist();
  }

  /** Changes the Deeper tab's choice (the readout or an option's text); nothing runs. */
  setDeeperChoice(patch: Partial<DeeperChoice>): void {
    const now = this.st.deeperChoice;
    // Choosing a readout shows the options its kept result was taken with (options in `patch` win).
    const base = patch.kind !== undefined && patch.kind !== now.kind ? choiceOfKept({ ...now, kind: patch.kind }, this.st.deeper[patch.kind]) : now;
    this.set({ deeperChoice: { ...base, ...patch } });
  }

  /**
   * Takes the chosen deeper readout at the active branch's cursor, with progress; Stop discards
   * it (the branch keeps its previous result of that kind). A complete one is kept in the ledger.
   */
  async takeDeeper(): Promise<boolean> {
    const choice = this.st.deeperChoice;
    const label = DEEPER_LABELS[choice.kind];
    const request = deeperRequestOf(choice);
    if (typeof request === 'string') {
      this.notice('error', `${label}: ${request}.`);
      return false;
    }
    this.set({ notice: null });
    const reply = await this.exchange(label, { kind: 'deeper', request });
    if (reply === null) return false;
    if (reply.kind !== 'deeper') return this.failed(reply);
    this.applyReadouts(reply.readouts);
    if (reply.stopped) {
      const previous = reply.readouts.deeper[choice.kind];
      this.notice('info', `${label} stopped: the partial result was discarded${previous === undefined ? '' : ` (the one taken at step ${previous.step} is still shown)`}.`);
      return false;
    }
    this.set({ tab: 'deeper' });
    return this.persist();
  }

  /** Replays every branch from the seed and compares each bit for bit. */
  async verify(): Promise<boolean> {
    this.set({ verify: null });
    const names = this.st.summary?.branches.map(b => b.name) ?? [];
    const total = this.st.summary?.branches.reduce((a, b) => a + b.tip, 0) ?? 0;
    const reply = await this.exchange('Verify', { kind: 'verify', branches: names }, total);
    if (reply === null) return false;
    if (reply.kind !== 'verified') return this.failed(reply);
    const ok = reply.results.every(r => r.match === 'bit-identical');
    this.set({ verify: reply.results, notice: { level: ok ? 'info' : 'error', text: verifyLines(reply.results) } });
    return ok;
  }

  /** Asks the engine to end the running action early. */
  stop(): void {
    this.engine?.stop();
  }

  protected resetConfirmed(): Promise<boolean> {
    return this.reset(true);
  }
}
