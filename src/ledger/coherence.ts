/**
 * Checks of a decoded ledger against the experiments its spec makes, so that a ledger the
 * engine could not continue is refused when it is opened, not at the first Step or Rewind:
 * the seed and the parameter count the spec gives, the step-0 state the spec draws, the
 * optimizer state each branch's recipe needs (kind, buffer names and lengths, scalars), the
 * row order and epoch position of mini-batches, a forked branch's weights at its fork step,
 * and a trajectory that reaches the head. Each problem is a {@link LedgerError} naming the field.
 */
import { freshState, rowCountOf, effectiveBatch } from '../core/session';
import { initOptimizerState } from '../core/optim/chain';
import { buildObjective } from '../core/assemble';
import type { Experiment } from '../core/setup';
import type { SessionState } from '../core/state';
import type { DecodedBranch } from './compose';
import { LedgerError } from './types';
import type { Ledger } from './types';

/**
 * Largest relative difference of a step-0 weight from the spec's draw: a ledger written (or first
 * written) by an older engine, whose elementary functions differed in the last bits (version 1:
 * DEVELOPERS.md, "Replays and JavaScript engines"), holds weights a few ulp (~1e-16 relative)
 * away; a changed seed, scheme or network moves them by order one.
 * // common practice (no single source): a margin of many orders of magnitude over last-bit noise
 */
const ENGINE_TOLERANCE = 1e-9;

/** What one branch's experiment implies for every state it stores. */
interface Expectation {
  experiment: Experiment;
  parameterCount: number;
  /** Training rows; null when the data live in files not read here (a ledger opened for display). */
  rows: number | null;
}


const sameKeys = (a: readonly string[], b: readonly string[]): boolean => a.length === b.length && [...a].sort().every((k, i) => k === [...b].sort()[i]);

/** Problems of one stored state against its branch's experiment. */
function stateProblems(s: SessionState, field: string, e: Expectation, out: LedgerError[]): void {
  const recipe = e.experiment.recipe;
  const fresh = initOptimizerState(recipe, e.parameterCount);
  const o = s.optimizer;
  if (o.kind !== fresh.kind) {
    out.push(new LedgerError(`${field}.optimizer.kind`, `is '${o.kind}', but this branch's recipe runs '${fresh.kind}'`));
    return;
  }
  const want = Object.keys(fresh.buffers);
  const have = Object.keys(o.buffers);
  for (const k of want) {
    const b = o.buffers[k];
    if (b === undefined) out.push(new LedgerError(`${field}.optimizer.buffers`, `has no buffer '${k}', which ${fresh.kind} with this recipe needs`));
    else if (b.length !== fresh.buffers[k].length) out.push(new LedgerError(`${field}.optimizer.buffers.${k}`, `holds ${b.length} numbers, but ${fresh.kind} with this recipe keeps ${fresh.buffers[k].length}`));
  }
  for (const k of have) if (!want.includes(k)) out.push(new LedgerError(`${field}.optimizer.buffers.${k}`, `is not a buffer of ${fresh.kind} with this recipe (it keeps ${want.join(', ') || 'none'})`));
  const wantScalars = Object.keys(fresh.scalars);
  if (!sameKeys(wantScalars, Object.keys(o.scalars)))
    out.push(new LedgerError(`${field}.optimizer.scalars`, `holds ${Object.keys(o.scalars).join(', ') || 'nothing'}, but ${fresh.kind} with this recipe keeps ${wantScalars.join(', ') || 'none'}`));
  if (o.t > s.step) out.push(new LedgerError(`${field}.optimizer.t`, `counts ${o.t} updates, more than the ${s.step} steps taken`));
  if (s.epoch > s.step) out.push(new LedgerError(`${field}.epoch`, `is ${s.epoch}, more passes over the data than the ${s.step} steps taken`));
  if (e.rows === null && s.order === null) return;
  const n = e.rows ?? (s.order as Int32Array).length;
  if (e.rows !== null && effectiveBatch(recipe, n) === 0) {
    if (s.order !== null) out.push(new LedgerError(`${field}.order`, `holds a row order, but this branch runs full batches (no order is kept)`));
    if (s.cursor !== 0) out.push(new LedgerError(`${field}.cursor`, `is ${s.cursor}, but a full-batch state is always at position 0`));
    return;
  }
  const order = s.order;
  if (order === null || order.length !== n) {
    out.push(new LedgerError(`${field}.order`, `must hold a permutation of the ${n} training rows (mini-batches of ${String(recipe.batch)}), got ${order === null ? 'none' : `${order.length} entries`}`));
    return;
  }
  const seen = new Uint8Array(n);
  for (let i = 0; i < n; i++) {
    const r = order[i];
    if (!(r >= 0 && r < n)) {
      out.push(new LedgerError(`${field}.order`, `entry ${i} is row ${r}, outside 0…${n - 1}`));
      return;
    }
    if (seen[r] === 1) {
      out.push(new LedgerError(`${field}.order`, `entry ${i} repeats row ${r}: not a permutation of 0…${n - 1}`));
      return;
    }
    seen[r] = 1;
  }
  if (s.cursor >= n) out.push(new LedgerError(`${field}.cursor`, `is ${s.cursor}, beyond the ${n} rows of an epoch (0…${n - 1})`));
}

/** Where a step-0 state differs from the one the spec draws, in words (or null when it matches). */
function freshDifference(s: SessionState, fresh: SessionState): string | null {
  const parts: string[] = [];
  let worst = 0;
  for (let i = 0; i < fresh.params.length && i < s.params.length; i++) {
    const a = s.params[i];
    const b = fresh.params[i];
    if (Object.is(a, b)) continue;
    const rel = Math.abs(a - b) / Math.max(1, Math.abs(b));
    worst = Number.isNaN(rel) ? Infinity : Math.max(worst, rel);
  }
  if (worst > ENGINE_TOLERANCE) parts.push(`weights, by up to ${worst.toPrecision(3)} relative`);
  const o = s.optimizer;
  const f = fresh.optimizer;
  const buffersDiffer = Object.keys(f.buffers).some((k) => o.buffers[k] === undefined || o.buffers[k].some((x, i) => !Object.is(x, f.buffers[k][i])));
  const scalarsDiffer = Object.keys(f.scalars).some((k) => !Object.is(o.scalars[k], f.scalars[k]));
  if (o.t !== f.t || buffersDiffer || scalarsDiffer) parts.push('optimizer state');
  if (s.rng.s.some((w, i) => w !== fresh.rng.s[i]) || s.rng.spare !== fresh.rng.spare) parts.push('batch generator');
  const orderDiffers = (s.order === null) !== (fresh.order === null) || (s.order !== null && fresh.order !== null && s.order.some((r, i) => r !== (fresh.order as Int32Array)[i]));
  if (orderDiffers) parts.push('row order');
  if (s.epoch !== 0 || s.cursor !== 0) parts.push('epoch position');
  return parts.length === 0 ? null : parts.join(', ');
}

/**
 * Whether record 0's loss is what the experiment's model, data and loss give at the stored
 * step-0 weights (one full-batch evaluation): a changed activation, loss or data row with a
 * recomputed spec hash keeps every state valid, but not this number.
 */
function lossProblem(experiment: Experiment, params: Float64Array, stored: number): string | null {
  const value = buildObjective(experiment.setup).value(params);
  if (Object.is(value, stored) || (!Number.isFinite(value) && !Number.isFinite(stored))) return null;
  const rel = Math.abs(value - stored) / Math.max(1, Math.abs(value));
  if (rel <= ENGINE_TOLERANCE) return null;
  return `record 0 holds the loss ${stored}, but the spec's model, data and loss give ${value} at the stored step-0 weights: the spec was changed after this ledger was written`;
}

/**
 * Problems of a decoded ledger against the experiments of its branches (ledger order; the
 * spec with each branch's ancestry of patches applied). Returns an empty list for a ledger the
 * engine can continue. `withoutFiles[i]`: branch i's experiment was built without the files its
 * spec names (a ledger opened for display), so its step-0 weights, record-0 loss and row count
 * are not checked (the engine checks them when it resumes with the files read).
 */
export function coherenceProblems(ledger: Ledger, branches: readonly DecodedBranch[], experiments: readonly Experiment[], withoutFiles: readonly boolean[] = []): LedgerError[] {
  const out: LedgerError[] = [];
  const expect = new Map<string, Expectation>();
  branches.forEach((b, i) => {
    const at = `branches[${i}]`;
    const experiment = experiments[i];
    const parent = b.parent ? expect.get(b.parent.branch) : undefined;
    let fresh: SessionState | null = null;
    let e: Expectation;
    if (parent === undefined || b.restart) {
      if (b.parent === undefined && experiment.seed !== ledger.seed)
        out.push(new LedgerError('seed', `is ${ledger.seed}, but the spec says seed: ${experiment.seed} (the ledger belongs to another run)`));
      fresh = freshState(experiment);
      e = { experiment, parameterCount: fresh.params.length, rows: withoutFiles[i] === true ? null : rowCountOf(experiment.setup) };
      if (fresh.params.length !== ledger.parameterCount) {
        out.push(new LedgerError(b.parent === undefined ? 'parameterCount' : `${at}.patch`, `the ${b.parent === undefined ? 'spec' : 'patched spec'} makes ${fresh.params.length} parameters, but the ledger stores ${ledger.parameterCount} per state`));
        return;
      }
    } else {
      e = { experiment, parameterCount: parent.parameterCount, rows: parent.rows };
    }
    expect.set(b.name, e);
    const saved = [...b.checkpoints.map((c, k) => ({ c, field: `${at}.checkpoints[${k}].state` })), { c: b.head, field: `${at}.head.state` }];
    for (const { c, field } of saved) stateProblems(c.state, field, e, out);
    if (fresh !== null && e.rows !== null) {
      const zero = saved.find((x) => x.c.step === 0);
      if (zero !== undefined) {
        const diff = freshDifference(zero.c.state, fresh);
        if (diff !== null) out.push(new LedgerError(zero.field, `differs from the step-0 state the ${b.restart ? 'patched spec' : 'spec'} draws (${diff}): the spec, seed or weights were changed after this ledger was written`));
        const record = b.trajectory.find((r) => r.step === 0);
        const problem = record === undefined ? null : lossProblem(experiment, zero.c.state.params, record.loss);
        if (problem !== null) out.push(new LedgerError(`${at}.trajectory.loss`, problem));
      }
    } else if (b.parent) {
      const pb = branches.find((x) => x.name === b.parent?.branch);
      const at0 = pb ? [...pb.checkpoints, pb.head].find((c) => c.step === b.parent?.step) : undefined;
      const mine = saved.find((x) => x.c.step === b.parent?.step);
      if (at0 !== undefined && mine !== undefined && mine.c.state.params.some((w, j) => !Object.is(w, at0.state.params[j])))
        out.push(new LedgerError(`${mine.field}.params`, `differs from the weights of branch '${b.parent.branch}' at the fork step ${b.parent.step}; a fork starts from its parent's weights`));
    }
    const last = b.trajectory[b.trajectory.length - 1];
    if (last === undefined || last.step < b.head.step)
      out.push(new LedgerError(`${at}.trajectory`, `${last === undefined ? 'holds no records' : `ends at step ${last.step}`}, before the head (step ${b.head.step}): the steps in between have no records`));
    const first = b.checkpoints.length > 0 ? b.checkpoints[0].step : b.head.step;
    if (b.cursor < first) out.push(new LedgerError(`${at}.cursor`, `is ${b.cursor}, before the branch's first saved state (step ${first})`));
  });
  return out;
}
