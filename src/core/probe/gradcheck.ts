/**
 * Gradient audit: compares the analytic gradient with central differences
 * (f(w + h·e_i) − f(w − h·e_i)) / 2h, truncation error O(h²), per parameter, summarizes
 * per layer, sweeps the step size to separate truncation from round-off, and gives
 * verdicts with the thresholds of CS231n's notes on gradient checking (see CHECKS.md):
 * relative error |a − n| / max(|a|, |n|) below 1e-7 is right; 1e-7 to 1e-4 acceptable;
 * 1e-4 to 1e-2 suspicious (acceptable near kinks such as ReLU at 0); above 1e-2 wrong.
 *
 * Step per parameter: h_i = h·max(1, |w_i|) (relative to the parameter's scale).
 * A component whose analytic and numeric values are both below the resolution of the
 * difference quotient cannot be judged; the denominator is floored at
 * `1e-8·max(1, |f(w)|)` so round-off on exactly-zero components (dead ReLU units) reads 0.
 */
import type { Objective, Rows } from '../objective';
import type { Rng } from '../rng';

/** Verdict of one relative error (thresholds above). */
export type AuditVerdict = 'right' | 'acceptable' | 'suspicious' | 'wrong';

/** Thresholds between the verdicts (source: Stanford CS231n notes, from memory). */
export const AUDIT_THRESHOLDS = { right: 1e-7, acceptable: 1e-4, suspicious: 1e-2 } as const;

/** Verdict for one relative error. */
export function auditVerdict(relError: number): AuditVerdict {
  if (!(relError <= AUDIT_THRESHOLDS.suspicious)) return 'wrong'; // NaN counts as wrong
  if (relError > AUDIT_THRESHOLDS.acceptable) return 'suspicious';
  if (relError > AUDIT_THRESHOLDS.right) return 'acceptable';
  return 'right';
}

/** One checked parameter. */
export interface AuditEntry {
  index: number;
  analytic: number;
  numeric: number;
  relError: number;
}

/** Summary of one layer (weight and bias blocks together) or analytic parameter block. */
export interface AuditLayer {
  /** Layer index, or −1 for analytic objectives. */
  layer: number;
  /** Block names covered, e.g. `layers[0].weight`, `layers[0].bias`. */
  blocks: string[];
  checked: number;
  total: number;
  maxRelError: number;
  medianRelError: number;
  /** Flat index of the worst parameter, and its block's name. */
  worstIndex: number;
  worstBlock: string;
  /** Position of the worst parameter inside its block: `[row, column]` of a weight matrix, `[i]` of a bias; empty when nothing was checked. */
  worstAt: number[];
  verdict: AuditVerdict;
}

/** One row of the step-size sweep. */
export interface SweepRow {
  h: number;
  maxRelError: number;
  medianRelError: number;
}

/** Result of {@link auditGradient}. */
export interface AuditResult {
  loss: number;
  parameterCount: number;
  checked: number;
  /** True when a seeded subset was checked instead of every parameter. */
  sampled: boolean;
  h: number;
  maxRelError: number;
  verdict: AuditVerdict;
  layers: AuditLayer[];
  entries: AuditEntry[];
  /** Relative errors of the worst entries over h = 1e-2 … 1e-10. */
  sweep: SweepRow[];
  /** Smallest error over the sweep and its h: if it is still large, round-off is not the cause. */
  bestOverSweep: SweepRow;
}

/** Options of {@link auditGradient}. */
export interface AuditOptions {
  /** Generator for the subset (required when P > sample). */
  rng?: Rng;
  /** Check at most this many parameters (default 200); below P a stratified seeded subset. */
  sample?: number;
  /** Base step (default 1e-5, the middle of the 1e-6 … 1e-4 float64 range). */
  h?: number;
  /** Rows to evaluate on (default all). */
  rows?: Rows;
  /** How many of the worst entries the sweep re-checks (default 8). */
  sweepEntries?: number;
}

/** Step sizes of the sweep, 1e-2 down to 1e-10. */
export const SWEEP_STEPS: readonly number[] = [1e-2, 1e-3, 1e-4, 1e-5, 1e-6, 1e-7, 1e-8, 1e-9, 1e-10];

function median(xs: number[]): number {
  if (xs.length === 0) return NaN;
  const s = [...xs].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m] : 0.5 * (s[m - 1] + s[m]);
}

/**
 * A loss beyond this leaves central differences meaningless: f(w ± h·e_i) carry an absolute
 * round-off of about 1e-16·|f|, and the floored denominator (1e-8·|f|) then turns every
 * comparison into an impossible relative error far below machine precision.
 */
export const AUDIT_LOSS_LIMIT = 1e100;

/** The gradient cannot be audited at these weights (non-finite or overflowing values: a diverged model). */
export class AuditDivergedError extends Error {
  constructor(detail: string) {
    super(`cannot audit: the model has diverged (${detail}); rewind to a finite step or change the recipe first`);
    this.name = 'AuditDivergedError';
  }
}

/** Relative error with the floored denominator described in the module comment. */
export function relativeError(a: number, n: number, floor: number): number {
  const d = Math.max(Math.abs(a), Math.abs(n), floor);
  return Math.abs(a - n) / d;
}

/**
 * Audits ∇f at `w` against central differences.
 * @returns per-parameter entries, per-layer summaries, a step-size sweep and verdicts
 */
export function auditGradient(objective: Objective, w: Float64Array, options: AuditOptions = {}): AuditResult {
  const P = objective.parameterCount;
  const sample = options.sample ?? 200;
  const h = options.h ?? 1e-5;
  const rows = options.rows;
  const grad = new Float64Array(P);
  const loss = objective.gradient(w, grad, rows);
  if (!Number.isFinite(loss)) throw new AuditDivergedError(`the loss is ${loss} at these weights`);
  if (Math.abs(loss) > AUDIT_LOSS_LIMIT) throw new AuditDivergedError(`the loss is ${loss.toExponential(2)}, beyond ${AUDIT_LOSS_LIMIT.toExponential(0)}`);
  const badGrad = grad.findIndex((g) => !Number.isFinite(g));
  if (badGrad >= 0) throw new AuditDivergedError(`gradient entry ${badGrad} is ${grad[badGrad]}`);
  const floor = 1e-8 * Math.max(1, Math.abs(loss));
  const work = Float64Array.from(w);
  const indices = chooseIndices(objective, sample, options.rng);

  const numeric = (i: number, step: number): number => {
    const hi = step * Math.max(1, Math.abs(w[i]));
    work[i] = w[i] + hi;
    const fp = objective.value(work, rows);
    work[i] = w[i] - hi;
    const fm = objective.value(work, rows);
    work[i] = w[i];
    if (!Number.isFinite(fp) || !Number.isFinite(fm)) throw new AuditDivergedError(`the loss is not finite a step of ${hi.toExponential(1)} away along parameter ${i}`);
    return (fp - fm) / (2 * hi);
  };

  const entries: AuditEntry[] = indices.map((i) => {
    const n = numeric(i, h);
    return { index: i, analytic: grad[i], numeric: n, relError: relativeError(grad[i], n, floor) };
  });

  const layers = summarizeLayers(objective, entries);
  const maxRelError = entries.reduce((m, e) => (e.relError > m || Number.isNaN(e.relError) ? e.relError : m), 0);
  const worst = [...entries].sort((a, b) => b.relError - a.relError).slice(0, options.sweepEntries ?? 8);
  const sweep: SweepRow[] = SWEEP_STEPS.map((step) => {
    const errs = worst.map((e) => relativeError(e.analytic, numeric(e.index, step), floor));
    return { h: step, maxRelError: Math.max(...errs), medianRelError: median(errs) };
  });
  const bestOverSweep = sweep.reduce((b, r) => (r.maxRelError < b.maxRelError ? r : b), sweep[0]);
  return {
    loss, parameterCount: P, checked: entries.length, sampled: entries.length < P, h, maxRelError,
    verdict: auditVerdict(maxRelError), layers, entries, sweep, bestOverSweep,
  };
}

/** Every index when P ≤ sample; otherwise a per-layer stratified seeded subset. */
function chooseIndices(objective: Objective, sample: number, rng: Rng | undefined): number[] {
  const P = objective.parameterCount;
  if (P <= sample) return Array.from({ length: P }, (_, i) => i);
  if (!rng) throw new Error(`auditGradient: P = ${P} exceeds sample = ${sample}, so a seeded generator (options.rng) is needed to choose the subset`);
  const out: number[] = [];
  for (const b of objective.blocks) {
    const share = Math.max(Math.min(b.size, 3), Math.round((sample * b.size) / P));
    const take = Math.min(b.size, share);
    // Partial Fisher–Yates over the block's offsets: `take` distinct indices.
    const pool = Int32Array.from({ length: b.size }, (_, i) => b.offset + i);
    for (let k = 0; k < take; k++) {
      const j = k + rng.int(b.size - k);
      const t = pool[k]; pool[k] = pool[j]; pool[j] = t;
      out.push(pool[k]);
    }
  }
  return out.sort((a, b) => a - b);
}

function summarizeLayers(objective: Objective, entries: AuditEntry[]): AuditLayer[] {
  type Hit = { e: AuditEntry; block: string; at: number[] };
  const byLayer = new Map<number, { blocks: string[]; total: number; list: Hit[] }>();
  for (const b of objective.blocks) {
    const g = byLayer.get(b.layer) ?? { blocks: [], total: 0, list: [] };
    g.blocks.push(b.name);
    g.total += b.size;
    for (const e of entries) if (e.index >= b.offset && e.index < b.offset + b.size) g.list.push({ e, block: b.name, at: positionInBlock(e.index - b.offset, b.shape) });
    byLayer.set(b.layer, g);
  }
  return [...byLayer.entries()].map(([layer, g]) => {
    const worst = g.list.reduce<Hit | undefined>((w, x) => (!w || x.e.relError > w.e.relError || Number.isNaN(x.e.relError) ? x : w), undefined);
    const maxRel = worst ? worst.e.relError : 0;
    return {
      layer, blocks: g.blocks, checked: g.list.length, total: g.total, maxRelError: maxRel,
      medianRelError: median(g.list.map((x) => x.e.relError)), worstIndex: worst ? worst.e.index : -1,
      worstBlock: worst ? worst.block : '', worstAt: worst ? worst.at : [], verdict: auditVerdict(maxRel),
    };
  });
}

/** Row-major coordinates of the `local`-th entry of a block of `shape` (`[row, column]` of an `[out, in]` weight). */
function positionInBlock(local: number, shape: readonly number[]): number[] {
  const at = new Array<number>(shape.length);
  let rest = local;
  for (let d = shape.length - 1; d >= 0; d--) {
    at[d] = rest % shape[d];
    rest = Math.floor(rest / shape[d]);
  }
  return at;
}
