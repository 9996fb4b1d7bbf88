/**
 * Matrix-free Lanczos iteration with full or partial re-orthogonalization for the extreme
 * eigenvalues of a symmetric operator, with residual bounds |β_m · s_{m,i}| (Golub & Van Loan,
 * *Matrix Computations*, 4th ed., §10.1–10.3).
 *
 * Algorithm, per step j (q_0 a seeded normal unit vector):
 * 1. w = A q_j; α_j = q_jᵀ w; w ← w − α_j q_j − β_{j−1} q_{j−1}.
 * 2. Full: re-orthogonalize w against every q_0..q_j by classical Gram–Schmidt applied twice
 *    ("twice is enough": Giraud, Langou & Rozložník 2005); α_j absorbs the first correction.
 *    Partial (the default without Ritz vectors): re-orthogonalize w against q_j only, and sweep
 *    the basis at this step and the next when the estimated |q_{j+1}ᵀq_k| passes √ε (Simon
 *    1984, see {@link OrthogonalityEstimate}): one pass measures every overlap q_kᵀw, then only
 *    the components above η = ε^{3/4} are subtracted. Semi-orthogonality keeps the Ritz values
 *    and their bounds accurate to working precision; at 85 002 parameters the run sweeps at
 *    about half the steps and subtracts about 40 % of the basis at a sweep.
 * 3. β_j = ‖w‖; q_{j+1} = w / β_j. When β_j vanishes the Krylov space is invariant; the run
 *    continues from a fresh seeded vector orthogonal to the basis (β_j = 0 keeps T block
 *    diagonal), which also lets it find further copies of a repeated eigenvalue.
 * 4. The Ritz values θ_i of T_m and the last components s_{m,i} of T_m's eigenvectors give the
 *    residual ‖A z_i − θ_i z_i‖ = |β_m s_{m,i}|; a wanted pair has converged when that residual is
 *    at most `tol` times the largest |θ| (`criterion` `residual`, the default), or — when only the
 *    eigenvalues are wanted (`eigenvalue`) — when the eigenvalue's error bound min(r, r²/gap)
 *    (Parlett, *The Symmetric Eigenvalue Problem*, Thm 11.7.1) is at most `tol`·max|θ| and its
 *    residual at most √tol·max|θ|.
 */
import type { Rng } from '../rng';
import { dot } from '../objective';
import type { IterationControl, LinearOperator, StopReason } from './operator';
import { normalizeInPlace, reportProgress, stopRequested } from './operator';
import { gaussRule, tridiagonalEigen, tridiagonalQL, type QuadratureRule } from './tridiagonal';
import { KrylovBasis } from './krylov-basis';

// Math functions bound once: global lookups inside hot loops are slow when the code runs in a
// vm context (as under jest), and binding them costs nothing elsewhere.
const { abs, max, sqrt } = Math;

/** The growing Krylov basis and tridiagonal coefficients of one Lanczos run. */
export interface KrylovState {
  readonly n: number;
  /** Orthonormal basis q_0 … q_{m−1}; one more (q_m) is kept when the run can continue (= `store.vectors`). */
  readonly basis: Float64Array[];
  /** Where the basis lives and how a vector is orthogonalized against it (blocked, SIMD where available). */
  readonly store: KrylovBasis;
  /** T's diagonal α_0 … α_{m−1}. */
  readonly alpha: number[];
  /** T's off-diagonal: beta[j] couples j and j+1 (0 at a restart). */
  readonly beta: number[];
  /** Operator products spent. */
  products: number;
  /** True once the basis spans the whole space (no further step is possible). */
  exhausted: boolean;
  /** Steps after which the run continued from a fresh vector (an invariant subspace was found). */
  readonly restarts: number[];
  /** Partial re-orthogonalization's estimates, or null for full re-orthogonalization at every step. */
  readonly partial: OrthogonalityEstimate | null;
  /** Steps whose new vector was re-orthogonalized against the basis (every step without `partial`). */
  reorthogonalized: number;
  /** The step's product w, reused from step to step (the basis stores a copy of it). */
  readonly work: Float64Array;
}

const EPS = Number.EPSILON;
/** Semi-orthogonality: |q_iᵀq_k| ≤ √ε keeps the Ritz values accurate to working precision (Simon 1984). */
const SEMI = Math.sqrt(EPS);
/** Simon's η: a sweep subtracts the components whose measured overlap exceeds ε^{3/4}. */
const ETA = SEMI * Math.sqrt(SEMI);
/** Subtracted runs fewer than this many vectors apart are subtracted as one (a run costs a pass over w of its own). */
const GAP = 8;

/**
 * Estimates ω_{j+1,k} ≈ q_{j+1}ᵀq_k of a Lanczos run without touching the basis, by the
 * recurrence of Simon, "The Lanczos algorithm with partial reorthogonalization", Math. Comp. 42
 * (1984) 115–142: with A q_j = β_{j−1} q_{j−1} + α_j q_j + β_j q_{j+1} + rounding,
 * β_j ω_{j+1,k} = β_k ω_{j,k+1} + (α_k − α_j) ω_{j,k} + β_{k−1} ω_{j,k−1} − β_{j−1} ω_{j−1,k} + θ,
 * the rounding θ taken as ε(β_k + β_j) with the sign that makes |ω| larger (a deterministic upper
 * estimate where Simon draws it at random). When an estimate passes √ε, the new vector's
 * overlaps with the whole basis are measured (one pass of dot products), the components above
 * η = ε^{3/4} (Simon's η) subtracted, and the measured overlaps replace the estimates — at this
 * step and the next. Resetting only the subtracted estimates to rounding and keeping the rest
 * let the true overlaps of the others run 300× above their estimates on a ReLU network's
 * Hessian; measured, they stay below.
 */
class OrthogonalityEstimate {
  private prev = new Float64Array(0);
  private cur = Float64Array.of(1);
  private again = false;

  constructor(private readonly n: number) {}

  /**
   * The estimates of the vector about to join the basis (w / b after step j), and whether it
   * must be re-orthogonalized.
   */
  next(alpha: readonly number[], beta: readonly number[], b: number, scale: number): boolean {
    const j = alpha.length - 1;
    const { prev, cur } = this;
    const nx = new Float64Array(j + 2);
    const aj = alpha[j];
    const bPrev = j > 0 ? beta[j - 1] : 0;
    for (let k = 0; k < j; k++) {
      let t = beta[k] * cur[k + 1] + (alpha[k] - aj) * cur[k] - bPrev * prev[k];
      if (k > 0) t += beta[k - 1] * cur[k - 1];
      t += (t < 0 ? -EPS : EPS) * (abs(beta[k]) + b);
      nx[k] = t / b;
    }
    nx[j] = this.psi(b, scale);
    nx[j + 1] = 1;
    this.prev = cur;
    this.cur = nx;
    // The local term counts too: a β_j tiny against T's scale leaves q_{j+1} far from orthogonal to q_j.
    const must = this.again || this.newest() > SEMI;
    this.again = must && !this.again;
    return must;
  }

  /** The largest estimate of |q_mᵀq_k| over k < m for the newest vector q_m. */
  newest(): number {
    let worst = 0;
    for (let k = 0; k + 1 < this.cur.length; k++) worst = max(worst, abs(this.cur[k]));
    return worst;
  }

  /**
   * The newest vector w / b was projected against the basis (`h` = Qᵀw, measured) and its
   * components over `runs` subtracted: those estimates fall to rounding, the others become the
   * measured overlaps h_k / b plus rounding (with their signs, which the recurrence needs).
   */
  reset(h: Float64Array, b: number, scale: number, runs: ReadonlyArray<readonly [number, number]>): void {
    const nx = this.cur;
    const psi = this.psi(b, scale);
    for (let k = 0; k < h.length; k++) {
      const o = h[k] / b;
      nx[k] = o < 0 ? o - psi : o + psi;
    }
    for (const [from, to] of runs) for (let k = from; k < to; k++) nx[k] = psi;
  }

  /**
   * A fresh vector (orthogonalized against the whole basis) joins as vector m after a restart,
   * in place of the one whose estimates `next` may already have made.
   */
  restart(m: number): void {
    const nx = new Float64Array(m + 1).fill(EPS * sqrt(this.n));
    nx[m] = 1;
    if (this.cur.length !== m + 1) this.prev = this.cur;
    this.cur = nx;
    this.again = false;
  }

  /**
   * Rounding left in q_{j+1}ᵀq_j: ε√n, more when β_j is small against the scale of T. Without
   * the √n the estimates fell below the measured |q_iᵀq_k| on the benchmark network's Hessian
   * (whose products round far more than ε‖A‖); with it they stay above by a factor of 10–1 000.
   */
  private psi(b: number, scale: number): number {
    return EPS * sqrt(this.n) * max(1, scale / b);
  }
}

const BREAKDOWN = 1e-12;

/** A fresh seeded unit vector orthogonal to the basis, or null when the basis spans the space. */
function freshDirection(n: number, store: KrylovBasis, rng: Rng): Float64Array | null {
  if (store.vectors.length >= n) return null;
  for (let attempt = 0; attempt < 3; attempt++) {
    const v = rng.fillNormal(new Float64Array(n));
    const before = normalizeInPlace(v);
    store.orthogonalize(v, -1);
    const after = normalizeInPlace(v);
    if (before > 0 && after > 1e-8) return v;
  }
  return null;
}

/**
 * Starts a Lanczos run from a seeded standard-normal unit vector (or `start`, normalized).
 * @param n - order of the operator.
 * @param steps - steps the run will probably take (sizes the basis memory; it grows beyond when needed).
 */
export function startKrylov(n: number, rng: Rng, start?: Float64Array, steps = 64, partial = false): KrylovState {
  if (!Number.isInteger(n) || n <= 0) throw new RangeError(`operator order must be a positive integer, got ${n}`);
  const q = start !== undefined ? Float64Array.from(start) : rng.fillNormal(new Float64Array(n));
  if (q.length !== n) throw new RangeError(`start vector has ${q.length} entries, expected ${n}`);
  if (normalizeInPlace(q) === 0) throw new RangeError('start vector must be non-zero');
  const store = new KrylovBasis(n, Math.min(n, steps) + 1);
  store.push(q);
  return { n, basis: store.vectors, store, alpha: [], beta: [], products: 0, exhausted: false, restarts: [], partial: partial ? new OrthogonalityEstimate(n) : null, reorthogonalized: 0, work: new Float64Array(n) };
}

/**
 * One Lanczos step with full re-orthogonalization (steps 1–3 above) on `state`.
 * @param restart - on an invariant subspace, continue from a fresh vector (extreme eigenvalues)
 *   or stop (`false`, for quadrature, whose measure belongs to the start vector).
 */
export function lanczosStep(op: LinearOperator, state: KrylovState, rng: Rng, restart: boolean): void {
  if (state.exhausted) return;
  const { n, basis, alpha, beta, store } = state;
  const j = alpha.length;
  const q = basis[j];
  const w = state.work;
  w.fill(0);
  op(q, w);
  state.products++;
  // The loops below fuse what used to be separate passes (α = qᵀw with the finiteness check's
  // wᵀw; both subtractions with the local coefficient's dot product; the last subtraction with
  // ‖w‖²). Each entry and each sum sees the same operations in the same order as before, so
  // the bits are the same; the vector is read four times a step instead of nine.
  let a = 0;
  let ww = 0;
  for (let i = 0; i < n; i++) {
    const x = w[i];
    a += q[i] * x;
    ww += x * x;
  }
  if (!Number.isFinite(a) || !Number.isFinite(ww)) {
    throw new Error(`the operator returned a non-finite product at Lanczos step ${j + 1} (NaN or ±Infinity); the weights may have diverged`);
  }
  const estimate = state.partial;
  // w ← w − α q − β_{j−1} q_{j−1}, and c = qᵀw after it (the local coefficient; unused without `partial`).
  let c = 0;
  if (j > 0) {
    const bp = beta[j - 1];
    const qp = basis[j - 1];
    for (let i = 0; i < n; i++) {
      const x = w[i] - a * q[i] - bp * qp[i];
      w[i] = x;
      c += q[i] * x;
    }
  } else {
    for (let i = 0; i < n; i++) {
      const x = w[i] - a * q[i];
      w[i] = x;
      c += q[i] * x;
    }
  }
  let b: number;
  if (estimate === null) {
    a += store.orthogonalize(w, j);
    state.reorthogonalized++;
    b = sqrt(dot(w, w));
  } else {
    // Local re-orthogonalization against q_j only; a sweep of the basis when the estimates ask.
    let ss = 0;
    for (let i = 0; i < n; i++) {
      const x = w[i] - c * q[i];
      w[i] = x;
      ss += x * x;
    }
    a += c;
    b = sqrt(ss);
  }
  alpha.push(a);
  let scale = 0;
  for (const x of alpha) scale = max(scale, abs(x));
  for (const x of beta) scale = max(scale, abs(x));
  if (estimate !== null && b > 0 && estimate.next(alpha, beta, b, max(scale, b))) {
    const { h, runs } = store.projectOut(w, ETA * b, GAP);
    if (runs.some(([from, to]) => from <= j && j < to)) alpha[j] += h[j];
    state.reorthogonalized++;
    b = sqrt(dot(w, w));
    estimate.reset(h, b, max(scale, b), runs);
  }
  if (b > BREAKDOWN * max(scale, b) && basis.length < n) {
    beta.push(b);
    store.push(w, b);
    return;
  }
  const fresh = restart ? freshDirection(n, store, rng) : null;
  if (fresh === null) {
    state.exhausted = true;
    beta.push(0);
    return;
  }
  beta.push(0);
  store.push(fresh);
  state.partial?.restart(alpha.length);
  state.restarts.push(alpha.length);
}

/** Options of {@link lanczosExtremes}. */
export interface LanczosOptions extends IterationControl {
  /** How many eigenvalues at each wanted end. Default 5. */
  k?: number;
  /** Which end(s): the algebraically largest, smallest (most negative), or both. Default `largest`. */
  which?: 'largest' | 'smallest' | 'both';
  /** Residual tolerance relative to the largest |Ritz value|. Default 1e-10. */
  tol?: number;
  /**
   * What `tol` bounds: the residual ‖A z − θ z‖ (`residual`, default: the Ritz vectors are good
   * to `tol` too), or the eigenvalue's error bound {@link RitzPair.errorBound} with the residual
   * at most √tol (`eigenvalue`: for readouts of eigenvalues alone; a clustered end of the
   * spectrum, where the bound falls as r², converges in fewer steps).
   */
  criterion?: 'residual' | 'eigenvalue';
  /** Step cap (basis memory is maxIterations·n doubles). Default min(n, 300). */
  maxIterations?: number;
  /** Steps before convergence is first tested. Default min(n, k + 10). */
  minIterations?: number;
  /** Also form the Ritz vectors of the wanted pairs. Default false. */
  vectors?: boolean;
  /**
   * Also return the Gauss quadrature rule of the run for its start vector ({@link LanczosResult.rule}):
   * a run from the seeded random unit vector is one more probe of stochastic Lanczos quadrature.
   * Default false.
   */
  rule?: boolean;
  /** Start vector (default: a seeded standard-normal draw from `rng`). */
  start?: Float64Array;
  /**
   * Re-orthogonalize against the whole basis at every step (`full`), or sweep it only when the
   * estimates of {@link OrthogonalityEstimate} pass √ε (`partial`: semi-orthogonality, which keeps the Ritz
   * values and their bounds accurate to working precision but not the Ritz vectors, whose
   * residuals may exceed |β_m s_{m,i}| by O(√ε)). Default `partial`, `full` with `vectors`.
   */
  reorthogonalize?: 'full' | 'partial';
  /**
   * With `which` = `both`: called once, as soon as the largest eigenvalue has converged while
   * the run goes on, with the converged ones of the largest end as they stand (the leading run
   * of the k largest that have converged, at least one; `smallest` empty, `stop` `converged`, no
   * vectors). Not called when everything converges at the same step. The final result's values
   * may still move within their bounds.
   */
  onLargest?: (partial: LanczosResult) => void;
}

/** One Ritz pair of a Lanczos run with its a-posteriori bounds. */
export interface RitzPair {
  /** Ritz value θ. */
  readonly value: number;
  /** ‖A z − θ z‖ = |β_m s_{m,i}| (Golub & Van Loan 4th ed., §10.1.4). */
  readonly residual: number;
  /** Bound on |θ − λ| for the nearest eigenvalue λ: min(r, r²/gap), gap estimated from the other Ritz values. */
  readonly errorBound: number;
  /** Whether the pair meets the run's criterion: `residual` ≤ tol·scale, or for `eigenvalue` `errorBound` ≤ tol·scale and `residual` ≤ √tol·scale. */
  readonly converged: boolean;
  /** Unit Ritz vector when requested, else null. */
  readonly vector: Float64Array | null;
}

/** Result of {@link lanczosExtremes}. */
export interface LanczosResult {
  /** The k largest Ritz pairs, descending (empty unless `which` is `largest` or `both`). */
  readonly largest: RitzPair[];
  /** The k smallest Ritz pairs, ascending (empty unless `which` is `smallest` or `both`). */
  readonly smallest: RitzPair[];
  /** Lanczos steps taken (= dimension of the final T). */
  readonly iterations: number;
  /** Operator products spent. */
  readonly products: number;
  /** Why the run ended. */
  readonly stop: StopReason;
  /** max |θ| of the final T, the scale of the relative tolerance. */
  readonly scale: number;
  /** The tolerance used. */
  readonly tol: number;
  /** What the tolerance bounded (see {@link LanczosOptions.criterion}). */
  readonly criterion: 'residual' | 'eigenvalue';
  /** Steps whose new vector was re-orthogonalized against the basis (every step unless `partial`). */
  readonly reorthogonalized: number;
  /** With `rule`: nodes (the Ritz values) and weights (squared first components) of T's Gauss rule. */
  readonly rule?: QuadratureRule;
}

interface RitzSnapshot {
  values: Float64Array;
  last: Float64Array;
}

function ritzSnapshot(state: KrylovState): RitzSnapshot {
  const m = state.alpha.length;
  const sub = new Float64Array(m);
  for (let j = 1; j < m; j++) sub[j] = state.beta[j - 1];
  const last = new Float64Array(m);
  last[m - 1] = 1;
  const values = tridiagonalQL({ diagonal: Float64Array.from(state.alpha), subdiagonal: sub }, last, 1);
  return { values, last };
}

function wantedIndices(m: number, k: number, which: 'largest' | 'smallest' | 'both'): { top: number[]; bottom: number[] } {
  const kk = Math.min(k, m);
  const top = which === 'smallest' ? [] : Array.from({ length: kk }, (_, i) => m - 1 - i);
  const bottom = which === 'largest' ? [] : Array.from({ length: kk }, (_, i) => i);
  return { top, bottom };
}

/**
 * The k largest and/or smallest eigenvalues of the symmetric operator `op` of order n by Lanczos
 * with full re-orthogonalization, stopping when every wanted residual bound |β_m s_{m,i}| is at
 * most `tol`·max|θ| (Golub & Van Loan 4th ed., §10.1–10.3).
 *
 * @param op - out ← A·v (A symmetric).
 * @param rng - seeded generator for the start vector and restarts.
 */
export function lanczosExtremes(op: LinearOperator, n: number, rng: Rng, options: LanczosOptions = {}): LanczosResult {
  const run = lanczosRun(op, n, rng, options);
  for (;;) {
    const r = run.next();
    if (r.done === true) return r.value;
  }
}

/**
 * {@link lanczosExtremes} with a turn for the caller's event loop between steps: after each step
 * `pause` returns a promise to wait for (the caller's choice, e.g. once 50 ms have passed) or
 * undefined to go on. A stop request that arrives as a message can then reach `shouldStop`,
 * which is read before every step. Same steps, same numbers.
 */
export async function lanczosExtremesSliced(op: LinearOperator, n: number, rng: Rng, options: LanczosOptions, pause: () => Promise<void> | undefined): Promise<LanczosResult> {
  const run = lanczosRun(op, n, rng, options);
  for (;;) {
    const r = run.next();
    if (r.done === true) return r.value;
    const wait = pause();
    if (wait !== undefined) await wait;
  }
}

/** The run of {@link lanczosExtremes}, yielding after every step. */
function* lanczosRun(op: LinearOperator, n: number, rng: Rng, options: LanczosOptions): Generator<void, LanczosResult, void> {
  const k = options.k ?? 5;
  const which = options.which ?? 'largest';
  const tol = options.tol ?? 1e-10;
  const criterion = options.criterion ?? 'residual';
  if (!Number.isInteger(k) || k < 1) throw new RangeError(`k must be a positive integer, got ${k}`);
  if (!(tol > 0)) throw new RangeError(`tol must be positive, got ${tol}`);
  const maxIterations = Math.min(n, options.maxIterations ?? 300);
  const minIterations = Math.min(maxIterations, options.minIterations ?? k + 10);
  if (!Number.isInteger(maxIterations) || maxIterations < 1) throw new RangeError(`maxIterations must be a positive integer, got ${options.maxIterations}`);
  const state = startKrylov(n, rng, options.start, maxIterations, (options.reorthogonalize ?? (options.vectors === true ? 'full' : 'partial')) === 'partial');
  let stop: StopReason = 'max-iterations';
  let snap: RitzSnapshot = { values: new Float64Array(0), last: new Float64Array(0) };
  let scale = 0;
  let toldLargest = false;
  while (state.alpha.length < maxIterations) {
    if (stopRequested(options)) {
      stop = 'cancelled';
      break;
    }
    lanczosStep(op, state, rng, true);
    const m = state.alpha.length;
    snap = ritzSnapshot(state);
    scale = max(abs(snap.values[0]), abs(snap.values[m - 1]));
    const bm = state.beta[m - 1];
    const { top, bottom } = wantedIndices(m, k, which);
    const wanted = [...top, ...bottom];
    const isDone = (i: number): boolean => meets(criterion, abs(bm * snap.last[i]), gapOf(snap.values, m, i), tol, scale);
    const done = wanted.filter(isDone).length;
    // After a restart the new block needs its own steps before the ends can be trusted.
    const sinceRestart = m - (state.restarts.length > 0 ? state.restarts[state.restarts.length - 1] : 0);
    const settled = state.restarts.length === 0 ? m >= minIterations : sinceRestart >= Math.min(minIterations, n - m + sinceRestart);
    const converged = state.exhausted || (settled && sinceRestart > 0 && done === wanted.length);
    if (options.onLargest !== undefined && !toldLargest && which === 'both' && !converged && settled && sinceRestart > 0 && isDone(top[0])) {
      toldLargest = true;
      const partial = assemble(state, snap, scale, k, 'largest', tol, criterion, 'converged', false);
      const leading = partial.largest.findIndex((p) => !p.converged);
      options.onLargest({ ...partial, largest: leading < 0 ? partial.largest : partial.largest.slice(0, leading) });
    }
    // A·q = 0 exactly for a random q means A = 0 (with probability one): every eigenvalue is 0.
    const zero = m === 1 && state.alpha[0] === 0 && state.beta[0] === 0;
    if (state.exhausted) stop = 'exhausted';
    else if (converged || zero) stop = 'converged';
    const cancel = reportProgress(options, {
      phase: 'lanczos',
      done: m,
      total: maxIterations,
      products: state.products,
      detail: `${state.exhausted ? wanted.length : done} of ${wanted.length} converged`,
    });
    if (converged || zero) break;
    if (cancel) {
      stop = 'cancelled';
      break;
    }
    yield;
  }
  const result = assemble(state, snap, scale, k, which, tol, criterion, stop, options.vectors === true);
  return options.rule === true && state.alpha.length > 0 ? { ...result, rule: gaussRule(state.alpha, state.beta) } : result;
}

/** Distance from Ritz value i to its nearest neighbour among the m (Infinity when alone). */
function gapOf(values: Float64Array, m: number, i: number): number {
  let gap = Infinity;
  if (i > 0) gap = Math.min(gap, values[i] - values[i - 1]);
  if (i + 1 < m) gap = Math.min(gap, values[i + 1] - values[i]);
  return gap;
}

/** The eigenvalue error bound min(r, r²/gap) of a Ritz value with residual r. */
function errorBoundOf(residual: number, gap: number): number {
  return Math.min(residual, gap > 0 ? (residual * residual) / gap : residual);
}

/** Whether a Ritz pair with this residual and gap has converged under `criterion`. */
function meets(criterion: 'residual' | 'eigenvalue', residual: number, gap: number, tol: number, scale: number): boolean {
  if (criterion === 'residual') return residual <= tol * scale;
  return errorBoundOf(residual, gap) <= tol * scale && residual <= sqrt(tol) * scale;
}

function assemble(
  state: KrylovState,
  snap: RitzSnapshot,
  scale: number,
  k: number,
  which: 'largest' | 'smallest' | 'both',
  tol: number,
  criterion: 'residual' | 'eigenvalue',
  stop: StopReason,
  wantVectors: boolean
): LanczosResult {
  const m = state.alpha.length;
  const { top, bottom } = wantedIndices(m, k, which);
  const bm = state.exhausted ? 0 : m > 0 ? state.beta[m - 1] : 0;
  let s: Float64Array | null = null;
  if (wantVectors && m > 0) {
    const sub = new Float64Array(m);
    for (let j = 1; j < m; j++) sub[j] = state.beta[j - 1];
    s = tridiagonalEigen({ diagonal: Float64Array.from(state.alpha), subdiagonal: sub }, true).vectors;
  }
  const pair = (i: number): RitzPair => {
    const value = snap.values[i];
    const residual = abs(bm * snap.last[i]);
    const gap = gapOf(snap.values, m, i);
    const errorBound = errorBoundOf(residual, gap);
    let vector: Float64Array | null = null;
    if (s !== null) {
      vector = new Float64Array(state.n);
      for (let j = 0; j < m; j++) {
        const c = s[i * m + j];
        const q = state.basis[j];
        for (let t = 0; t < state.n; t++) vector[t] += c * q[t];
      }
      normalizeInPlace(vector);
    }
    return { value, residual, errorBound, converged: meets(criterion, residual, gap, tol, scale), vector };
  };
  return {
    largest: top.map(pair),
    smallest: bottom.map(pair),
    iterations: m,
    products: state.products,
    stop,
    scale,
    tol,
    criterion,
    reorthogonalized: state.reorthogonalized,
  };
}
