/**
 * The live session: weights, optimizer state, batch generator and step count of one
 * experiment, advanced one optimizer update at a time.
 *
 * One update (`step`) does, in order:
 *  1. take this step's rows (full batch, or the next slice of the epoch's seeded permutation);
 *  2. g = ∇f(w) on those rows (batch loss comes with it); record ‖g‖ and per-layer ‖∇W‖;
 *  3. the gradient transforms (`optim/gradient.ts`): clamp to `clipValue`, clip the global norm
 *     to `clipNorm` (first-order families), add coupled weight decay λw (not for AdamW);
 *  4. the optimizer family writes an ascent-form direction u and a step size s;
 *  5. Δw = −s·(lrScale per layer)·u ({@link descend}), w ← w + Δw ({@link applyUpdates});
 *  6. full-batch loss (and held-out loss) at the new w go into the step record; at full batch
 *     the gradient computed with that loss is kept for the next update (same bits as recomputing);
 *  7. a reduce-on-plateau schedule observes that loss (`optim/plateau.ts`).
 * All buffers are allocated once; an update allocates only the record it returns.
 */
import { buildHeldOutObjective, buildObjective, initialParameters } from '../assemble';
import { norm2, type Objective, type Rows } from '../objective';
import { Rng } from '../rng';
import type { Experiment } from '../setup';
import type { LayerRecord, OptimizerState, SessionState, StepRecord } from '../state';
import { decayPenalty, withWeightDecay } from '../optim/decayed';
import { decayMask, gradientChain, layerScales, type GradientTransform } from '../optim/gradient';
import { initOptimizerState } from '../optim/chain';
import { observePlateau, plateauFactor } from '../optim/plateau';
import { familyFor } from '../optim/registry';
import { learningRate } from '../optim/schedule';
import { checkRecipe } from '../optim/recipe-check';
import { applyUpdates, descend, Workspace, type OptimizerContext, type OptimizerFamily } from '../optim/types';
import { drawOrder, drawSubset, nextBatch, type BatchBuffers, type BatchPosition } from './batches';
import { copyOptimizerState, copySessionState, fingerprintState } from './state-data';
import { effectiveBatch } from './adapt';
import { evaluateStop, type StopCondition } from './stop';
import { copyPlain } from '../plain';

/** Callbacks for long runs; `shouldStop` is checked between updates. */
export interface StepHooks {
  /** After each update: updates done so far in this call and the number asked for. */
  onProgress?(done: number, total: number): void;
  /** Asked before each update (except the first of {@link Session.step}); true ends the call early. */
  shouldStop?(): boolean;
  /** After each update, with its record, while the session is at that step. */
  onRecord?(record: StepRecord): void;
}

/**
 * What a {@link Session.runUntil} call continues from when a long run is done in several
 * calls: the loss the 'diverged' condition compares with and the updates already applied.
 */
export interface RunCarry {
  startLoss: number;
  done: number;
}

/** Why {@link Session.runUntil} ended. */
export type RunReason = 'condition' | 'diverged' | 'max-steps' | 'stopped';

/** Objectives and start point to use instead of building them from the setup (tests, probes). */
export interface SessionParts {
  objective: Objective;
  heldOut?: Objective;
  /** Initial parameters (copied); default: `initialParameters(setup, fork('init'))`. */
  initial?: Float64Array;
}

/** Mutable context object reused across updates so the hot path allocates nothing. */
class StepContext implements OptimizerContext {
  lr = 0;
  rows: Rows = undefined;
  curvatureRows: Rows = undefined;
  loss = 0;
  extraEvaluations = 0;
  constructor(readonly recipe: Experiment['recipe'], readonly objective: Objective, readonly work: Workspace, readonly decayMask: Uint8Array | null) {}
}

/** Weight blocks, one per layer, for the per-layer record. */
interface LayerSlice {
  layer: number;
  offset: number;
  size: number;
}

/** A running experiment (see the module comment for the order of operations). */
export class Session {
  readonly objective: Objective;
  private readonly heldOut: Objective | undefined;
  private readonly family: OptimizerFamily;
  private readonly params: Float64Array;
  private optState: OptimizerState;
  private readonly rng: Rng;
  private readonly pos: BatchPosition;
  private steps: number;
  private readonly batchSize: number;
  private readonly rowBuffers: BatchBuffers | null;
  private readonly curvature: Int32Array | undefined;
  private readonly grad: Float64Array;
  /** Full batch: ∇f at the current weights, computed with the record's loss after the last update. */
  private readonly nextGrad: Float64Array;
  private nextValid = false;
  private nextLoss = 0;
  private readonly upd: Float64Array;
  private readonly scales: Float64Array | null;
  private readonly transforms: GradientTransform[];
  private readonly ctx: StepContext;
  private readonly layers: LayerSlice[];
  private readonly layerGrad: Float64Array;

  /** The experiment this session runs (its recipe is a private copy; the setup is shared, read-only). */
  readonly experiment: Experiment;

  private constructor(experiment: Experiment, parts: SessionParts, state: SessionState | null) {
    this.experiment = { seed: experiment.seed, setup: experiment.setup, recipe: copyRecipe(experiment.recipe) };
    const { setup, recipe, seed } = this.experiment;
    checkRecipe(recipe);
    this.objective = parts.objective;
    this.heldOut = parts.heldOut;
    const p = this.objective.parameterCount;
    this.family = familyFor(recipe.optimizer);
    const n = this.objective.rowCount;
    this.batchSize = effectiveBatch(recipe, n);
    this.rowBuffers = this.batchSize > 0 ? { full: new Int32Array(this.batchSize), tail: n % this.batchSize !== 0 ? new Int32Array(n % this.batchSize) : null } : null;
    const cb = recipe.curvatureBatch;
    this.curvature = typeof cb === 'number' && n > 0 && cb < n ? drawSubset(Rng.fromSeed(seed).fork('curvature'), n, cb) : undefined;
    if (state === null) {
      const init = parts.initial ?? initialParameters(setup, Rng.fromSeed(seed).fork('init'));
      if (init.length !== p) throw new Error(`initial parameters have length ${init.length}, the objective expects ${p}`);
      this.params = Float64Array.from(init);
      this.optState = initOptimizerState(recipe, p);
      this.rng = Rng.fromSeed(seed).fork('batches');
      this.pos = { epoch: 0, cursor: 0, order: this.batchSize > 0 ? drawOrder(this.rng, n, null) : null };
      this.steps = 0;
    } else {
      checkState(state, initOptimizerState(recipe, p), p, n, this.batchSize);
      const s = copySessionState(state);
      this.params = s.params;
      this.optState = s.optimizer;
      this.rng = Rng.fromState(s.rng);
      this.pos = { epoch: s.epoch, cursor: s.cursor, order: this.batchSize > 0 ? s.order : null };
      this.steps = s.step;
    }
    this.grad = new Float64Array(p);
    this.nextGrad = new Float64Array(p);
    this.upd = new Float64Array(p);
    this.scales = layerScales(this.objective.blocks, p, recipe.layers);
    const work = new Workspace(p);
    const mask = decayMask(this.objective.blocks, p, recipe);
    this.transforms = gradientChain(recipe, this.objective.blocks, p, this.family);
    this.ctx = new StepContext(recipe, this.family.firstOrder ? this.objective : withWeightDecay(this.objective, recipe.weightDecay, mask), work, mask);
    this.layers = this.objective.blocks.filter((b) => b.kind === 'weight').map((b) => ({ layer: b.layer, offset: b.offset, size: b.size }));
    this.layerGrad = new Float64Array(this.layers.length);
  }

  /** A new session at step 0: w0 from fork('init') of the seed, batch orders from fork('batches'). */
  static create(experiment: Experiment, parts?: SessionParts): Session {
    return new Session(experiment, parts ?? Session.build(experiment), null);
  }

  /** A session continuing `state` bit for bit (the state is deep-copied). */
  static restore(experiment: Experiment, state: SessionState, parts?: SessionParts): Session {
    return new Session(experiment, parts ?? Session.build(experiment), state);
  }

  private static build(experiment: Experiment): SessionParts {
    return { objective: buildObjective(experiment.setup), heldOut: buildHeldOutObjective(experiment.setup) };
  }

  /** Updates applied so far. */
  get stepCount(): number {
    return this.steps;
  }

  /** The current weights (a live view: do not modify). */
  get parameters(): Float64Array {
    return this.params;
  }

  /** The fixed curvature rows drawn once from fork('curvature'), or undefined ('same' / 'full'). */
  curvatureRows(): Int32Array | undefined {
    return this.curvature === undefined ? undefined : Int32Array.from(this.curvature);
  }

  /** Full-batch training loss at the current weights (regularization included). */
  fullLoss(): number {
    return this.objective.value(this.params);
  }

  /** Held-out loss at the current weights, when the setup has a held-out split. */
  heldOutLoss(): number | undefined {
    return this.heldOut?.value(this.params);
  }

  /** Record 0 style record of the current state: no update, batch loss NaN, ‖g‖ full batch. */
  initialRecord(): StepRecord {
    const loss = this.objective.gradient(this.params, this.grad);
    const layers = this.layers.map((l) => ({ layer: l.layer, weightNorm: norm2(this.params, l.offset, l.size), gradNorm: norm2(this.grad, l.offset, l.size), updateRatio: 0 }));
    const rec: StepRecord = { step: this.steps, loss, batchLoss: NaN, gradNorm: norm2(this.grad), updateNorm: 0, lr: learningRate(this.experiment.recipe, this.steps, plateauFactor(this.optState)), evaluations: 1, layers, ms: 0 };
    const h = this.heldOutLoss();
    if (h !== undefined) rec.heldOutLoss = h;
    return rec;
  }

  /** Applies n updates (default 1); record k describes the state after it. */
  step(n = 1, hooks?: StepHooks): StepRecord[] {
    if (!Number.isInteger(n) || n < 0) throw new Error(`step count must be a non-negative integer, got ${n}`);
    const out: StepRecord[] = [];
    for (let i = 0; i < n; i++) {
      if (i > 0 && hooks?.shouldStop?.()) break;
      const r = this.update();
      out.push(r);
      hooks?.onRecord?.(r);
      hooks?.onProgress?.(i + 1, n);
    }
    return out;
  }

  /**
   * Steps until `cond` holds, the loss becomes non-finite ('diverged'), `maxSteps` updates
   * were applied, or `hooks.shouldStop` returns true. The 'diverged' condition compares with
   * the full-batch loss at the start of the run, or `carry.startLoss` when a run continues in
   * this call (`carry.done` updates then count towards a 'steps' condition).
   */
  runUntil(cond: StopCondition, maxSteps: number, hooks?: StepHooks, carry?: RunCarry): { records: StepRecord[]; reason: RunReason } {
    if (!Number.isInteger(maxSteps) || maxSteps < 0) throw new Error(`maxSteps must be a non-negative integer, got ${maxSteps}`);
    const records: StepRecord[] = [];
    const start = carry !== undefined ? carry.startLoss : cond.kind === 'diverged' ? this.fullLoss() : NaN;
    const before = carry?.done ?? 0;
    for (let i = 0; i < maxSteps; i++) {
      if (hooks?.shouldStop?.()) return { records, reason: 'stopped' };
      const rec = this.update();
      records.push(rec);
      hooks?.onRecord?.(rec);
      hooks?.onProgress?.(i + 1, maxSteps);
      const verdict = evaluateStop(cond, rec, before + records.length, start, this.params);
      if (verdict !== null) return { records, reason: verdict };
    }
    return { records, reason: 'max-steps' };
  }

  /** A deep copy of everything needed to continue bit for bit. */
  state(): SessionState {
    return copySessionState({ step: this.steps, params: this.params, optimizer: this.optState, rng: this.rng.state(), epoch: this.pos.epoch, cursor: this.pos.cursor, order: this.pos.order });
  }

  /** A copy of the optimizer state alone. */
  optimizerState(): OptimizerState {
    return copyOptimizerState(this.optState);
  }

  /** SHA-256 hex of {@link Session.state} (see `fingerprintState` for the byte order). */
  fingerprint(): string {
    return fingerprintState({ step: this.steps, params: this.params, optimizer: this.optState, rng: this.rng.state(), epoch: this.pos.epoch, cursor: this.pos.cursor, order: this.pos.order });
  }

  private update(): StepRecord {
    const t0 = now();
    const recipe = this.experiment.recipe;
    const rows = this.batchSize > 0 ? nextBatch(this.rng, this.pos, this.batchSize, this.rowBuffers as BatchBuffers) : undefined;
    if (this.batchSize === 0 && this.objective.rowCount > 0) this.pos.epoch += 1;
    const lr = learningRate(recipe, this.steps, plateauFactor(this.optState));
    const g = this.grad;
    let batchLoss: number;
    if (rows === undefined && this.nextValid) {
      g.set(this.nextGrad);
      batchLoss = this.nextLoss;
    } else {
      batchLoss = this.objective.gradient(this.params, g, rows);
    }
    this.nextValid = false;
    for (let k = 0; k < this.layers.length; k++) this.layerGrad[k] = norm2(g, this.layers[k].offset, this.layers[k].size);
    const gradNorm = norm2(g);
    for (const t of this.transforms) t.apply(g, this.params);
    const ctx = this.ctx;
    ctx.lr = lr;
    ctx.rows = rows;
    ctx.curvatureRows = recipe.curvatureBatch === 'same' ? rows : this.curvature;
    ctx.loss = this.family.firstOrder || recipe.weightDecay === 0 ? batchLoss : batchLoss + decayPenalty(this.params, recipe.weightDecay, ctx.decayMask);
    ctx.extraEvaluations = 0;
    const stepSize = this.family.update(g, this.optState, this.params, ctx, this.upd);
    descend(this.upd, stepSize, this.family.firstOrder ? this.scales : null);
    const layers: LayerRecord[] = new Array(this.layers.length);
    for (let k = 0; k < this.layers.length; k++) {
      const l = this.layers[k];
      const before = norm2(this.params, l.offset, l.size);
      const delta = norm2(this.upd, l.offset, l.size);
      layers[k] = { layer: l.layer, weightNorm: 0, gradNorm: this.layerGrad[k], updateRatio: before > 0 ? delta / before : delta > 0 ? Infinity : 0 };
    }
    const updateNorm = norm2(this.upd);
    applyUpdates(this.params, this.upd);
    this.steps += 1;
    for (let k = 0; k < this.layers.length; k++) layers[k].weightNorm = norm2(this.params, this.layers[k].offset, this.layers[k].size);
    // Full batch: the gradient at the new weights comes with its loss and serves the next
    // update, so a full-batch step costs one gradient evaluation, not a gradient and a value.
    let loss: number;
    if (rows === undefined) {
      loss = this.objective.gradient(this.params, this.nextGrad);
      this.nextLoss = loss;
      this.nextValid = true;
    } else {
      loss = this.objective.value(this.params);
    }
    if (recipe.schedule.kind === 'plateau') observePlateau(recipe.schedule, this.optState, loss);
    const rec: StepRecord = { step: this.steps, loss, batchLoss, gradNorm, updateNorm, lr, evaluations: 1 + ctx.extraEvaluations, layers, ms: 0 };
    const h = this.heldOut?.value(this.params);
    if (h !== undefined) rec.heldOutLoss = h;
    rec.ms = now() - t0;
    return rec;
  }
}

/** Rejects a state that this recipe and objective cannot continue, with the field at fault. */
function checkState(state: SessionState, fresh: OptimizerState, p: number, n: number, batch: number): void {
  if (!Number.isInteger(state.step) || state.step < 0) throw new Error(`state.step must be a non-negative integer, got ${state.step}`);
  if (state.params.length !== p) throw new Error(`state.params has length ${state.params.length}, the objective expects ${p}`);
  if (state.optimizer.kind !== fresh.kind) {
    throw new Error(`state.optimizer.kind is '${state.optimizer.kind}' but recipe.optimizer is '${fresh.kind}'`);
  }
  for (const k of Object.keys(fresh.buffers)) {
    const b = state.optimizer.buffers[k];
    if (b === undefined) throw new Error(`state.optimizer.buffers.${k} is missing (the recipe's ${fresh.kind} needs it)`);
    if (b.length !== fresh.buffers[k].length) throw new Error(`state.optimizer.buffers.${k} has length ${b.length}, expected ${fresh.buffers[k].length}`);
  }
  for (const k of Object.keys(fresh.scalars)) {
    if (typeof state.optimizer.scalars[k] !== 'number') throw new Error(`state.optimizer.scalars.${k} is missing (the recipe's ${fresh.kind} needs it)`);
  }
  // nothing beyond what this recipe's state holds (core/optim/layout.ts declares it per family)
  for (const k of Object.keys(state.optimizer.buffers)) {
    if (!Object.prototype.hasOwnProperty.call(fresh.buffers, k)) throw new Error(`state.optimizer.buffers.${k} is not a buffer of the recipe's ${fresh.kind} (it keeps ${Object.keys(fresh.buffers).join(', ') || 'no buffers'})`);
  }
  for (const k of Object.keys(state.optimizer.scalars)) {
    if (!Object.prototype.hasOwnProperty.call(fresh.scalars, k)) throw new Error(`state.optimizer.scalars.${k} is not a scalar of the recipe's ${fresh.kind} (it keeps ${Object.keys(fresh.scalars).join(', ') || 'no scalars'})`);
  }
  if (batch === 0) return;
  const order = state.order;
  if (order === null || order.length !== n) throw new Error(`state.order must hold a permutation of ${n} rows for batch size ${batch}`);
  const seen = new Uint8Array(n);
  for (let i = 0; i < n; i++) {
    const r = order[i];
    if (!(r >= 0 && r < n) || seen[r] === 1) throw new Error(`state.order is not a permutation of 0…${n - 1} (entry ${i} is ${r})`);
    seen[r] = 1;
  }
  if (!Number.isInteger(state.cursor) || state.cursor < 0 || state.cursor >= n) throw new Error(`state.cursor must be an integer in [0, ${n - 1}], got ${state.cursor}`);
}

function copyRecipe(r: Experiment['recipe']): Experiment['recipe'] {
  return { ...r, schedule: copyPlain(r.schedule), layers: r.layers.map((l) => ({ ...l })) };
}

function now(): number {
  return typeof performance !== 'undefined' ? performance.now() : Date.now();
}
