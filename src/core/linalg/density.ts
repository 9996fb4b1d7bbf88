/**
 * Spectral density of a symmetric operator by stochastic Lanczos quadrature (SLQ), and
 * Hutchinson's stochastic trace estimate.
 *
 * SLQ (Ubaru, Chen & Saad, SIAM J. Matrix Anal. Appl. 38(4), 2017; Ghorbani, Krishnan & Xiao,
 * ICML 2019; Golub & Meurant, *Matrices, Moments and Quadrature*, 2010): for a unit probe v,
 * m Lanczos steps from v give T_m = S Θ Sᵀ, and the Gauss quadrature rule with nodes θ_j and
 * weights τ_j = S[0, j]² approximates vᵀ f(A) v = Σ_i (vᵀu_i)² f(λ_i). Over probes with
 * E[v vᵀ] = I/n, the average of these measures estimates the spectral density
 * φ(t) = (1/n) Σ_i δ(t − λ_i); we draw it with Gaussian kernels of width σ on a grid.
 */
import { erf, exp } from '../elementary';
import type { Rng } from '../rng';
import { dot } from '../objective';
import type { BlockProducts, IterationControl, LinearOperator, StopReason } from './operator';
import { reportProgress, stopRequested } from './operator';
import { lanczosStep, startKrylov } from './lanczos';
import { gaussRule, type QuadratureRule } from './tridiagonal';

// Math functions bound once: global lookups inside hot loops are slow when the code runs in a
// vm context (as under jest), and binding them costs nothing elsewhere.
const { ceil, floor, max, min } = Math;

/** Options of {@link spectralDensity}. */
export interface DensityOptions extends IterationControl {
  /** Number of probe vectors (each a seeded normal vector, normalized). Default 8. */
  probes?: number;
  /** Lanczos steps per probe (quadrature nodes). Default min(n, 80). */
  steps?: number;
  /** Grid points of the broadened density. Default 512. */
  gridPoints?: number;
  /** Gaussian kernel width. Default 1 % of the node range (max θ − min θ), or 1e-3 if that is 0. */
  sigma?: number;
  /** Grid range. Default [min θ − 5σ, max θ + 5σ], so the broadened density integrates to 1 on it. */
  range?: [number, number];
  /** Eigenvalues below −cutoff·max|θ| count as negative in `negativeShare`. Default 1e-6. */
  negativeCutoff?: number;
}

/** A spectral density estimate with its quadrature rules. */
export interface SpectralDensity {
  /** Grid abscissae t_g (ascending, equally spaced). */
  readonly grid: Float64Array;
  /** φ(t_g) = (1/probes) Σ_l Σ_j τ_lj · N(t_g; θ_lj, σ²). */
  readonly density: Float64Array;
  /** Kernel width used. */
  readonly sigma: number;
  /** Quadrature nodes θ_lj of each probe. */
  readonly nodes: Float64Array[];
  /** Quadrature weights τ_lj of each probe (each probe's weights sum to 1). */
  readonly weights: Float64Array[];
  /** Mean of the estimated density, Σ τθ averaged over probes — an estimate of tr(A)/n. */
  readonly mean: number;
  /** Standard error of `mean` across probes (NaN for one probe). */
  readonly meanStandardError: number;
  /**
   * Estimated share of eigenvalues below −cutoff·max|θ|: the broadened density's mass there,
   * (1/probes) Σ τ Φ((−cutoff·max|θ| − θ)/σ). Broadening matters: Hessians of networks carry a
   * large mass near zero that a few Gauss nodes represent on one side or the other at random;
   * the kernel splits it instead (so near-zero eigenvalues count about half negative).
   */
  readonly negativeShare: number;
  /** The cutoff used for `negativeShare` (relative to `scale`). */
  readonly negativeCutoff: number;
  /** max |θ| over all nodes. */
  readonly scale: number;
  /** Probes completed (fewer than asked when cancelled). */
  readonly probes: number;
  /** Operator products spent. */
  readonly products: number;
  /** `converged` when all probes ran, else `cancelled`. */
  readonly stop: StopReason;
}

/**
 * Spectral density of the symmetric operator `op` by stochastic Lanczos quadrature with
 * Gaussian broadening (Ubaru, Chen & Saad 2017; Ghorbani, Krishnan & Xiao 2019).
 *
 * @param rng - seeded generator for the probe vectors (each probe forks `probe-<l>`).
 */
export function spectralDensity(op: LinearOperator, n: number, rng: Rng, options: DensityOptions = {}): SpectralDensity {
  const probes = options.probes ?? 8;
  const steps = min(n, options.steps ?? 80);
  const gridPoints = options.gridPoints ?? 512;
  const negativeCutoff = options.negativeCutoff ?? 1e-6;
  if (!Number.isInteger(probes) || probes < 1) throw new RangeError(`probes must be a positive integer, got ${probes}`);
  if (!Number.isInteger(steps) || steps < 1) throw new RangeError(`steps must be a positive integer, got ${options.steps}`);
  if (!Number.isInteger(gridPoints) || gridPoints < 2) throw new RangeError(`gridPoints must be an integer >= 2, got ${gridPoints}`);
  const nodes: Float64Array[] = [];
  const weights: Float64Array[] = [];
  let products = 0;
  let stop: StopReason = 'converged';
  outer: for (let l = 0; l < probes; l++) {
    const probeRng = rng.fork(`probe-${l}`);
    const state = startKrylov(n, probeRng, undefined, steps, true);
    while (state.alpha.length < steps && !state.exhausted) {
      if (stopRequested(options)) {
        stop = 'cancelled';
        break outer;
      }
      lanczosStep(op, state, probeRng, false);
    }
    products += state.products;
    const rule = gaussRule(state.alpha, state.beta);
    nodes.push(rule.nodes);
    weights.push(rule.weights);
    const cancel = reportProgress(options, { phase: 'density', done: l + 1, total: probes, products, detail: `probe ${l + 1} of ${probes}` });
    if (cancel && l + 1 < probes) {
      stop = 'cancelled';
      break;
    }
  }
  if (nodes.length === 0) throw new Error('spectral density was cancelled before the first probe finished');
  return broaden(nodes, weights, { ...options, gridPoints, negativeCutoff }, products, stop);
}

/**
 * `d` with more probes' rules appended — probes run elsewhere, e.g. a Lanczos run for the
 * extreme eigenvalues from a seeded random unit vector, which is one more SLQ probe with as many
 * nodes as it took steps — broadened again with `options` (those `d` was computed with). Its
 * products stay those of `d`: the appended runs count where they ran.
 */
export function withProbes(d: SpectralDensity, rules: readonly QuadratureRule[], options: Omit<DensityOptions, 'onProgress' | 'shouldStop'> = {}): SpectralDensity {
  return densityOfRules([...d.nodes.map((nodes, l) => ({ nodes, weights: d.weights[l] })), ...rules], options, d.products, d.stop);
}

/** The density of probes' rules alone (no products of its own), broadened with `options`. */
export function densityOfRules(rules: readonly QuadratureRule[], options: Omit<DensityOptions, 'onProgress' | 'shouldStop'> = {}, products = 0, stop: StopReason = 'converged'): SpectralDensity {
  if (rules.length === 0) throw new Error('a spectral density needs at least one probe');
  const gridPoints = options.gridPoints ?? 512;
  const negativeCutoff = options.negativeCutoff ?? 1e-6;
  if (!Number.isInteger(gridPoints) || gridPoints < 2) throw new RangeError(`gridPoints must be an integer >= 2, got ${gridPoints}`);
  return broaden(rules.map((r) => r.nodes), rules.map((r) => r.weights), { ...options, gridPoints, negativeCutoff }, products, stop);
}

function broaden(
  nodes: Float64Array[],
  weights: Float64Array[],
  options: DensityOptions & { gridPoints: number; negativeCutoff: number },
  products: number,
  stop: StopReason
): SpectralDensity {
  let lo = Infinity;
  let hi = -Infinity;
  for (const th of nodes) for (const t of th) {
    lo = min(lo, t);
    hi = max(hi, t);
  }
  const scale = max(Math.abs(lo), Math.abs(hi));
  const sigma = options.sigma ?? (hi > lo ? 0.01 * (hi - lo) : max(1e-3, 1e-3 * scale));
  if (!(sigma > 0)) throw new RangeError(`sigma must be positive, got ${sigma}`);
  const [g0, g1] = options.range ?? [lo - 5 * sigma, hi + 5 * sigma];
  if (!(g1 > g0)) throw new RangeError(`density range must satisfy low < high, got [${g0}, ${g1}]`);
  const grid = Float64Array.from({ length: options.gridPoints }, (_, g) => g0 + ((g1 - g0) * g) / (options.gridPoints - 1));
  const density = new Float64Array(options.gridPoints);
  const norm = 1 / (nodes.length * sigma * Math.sqrt(2 * Math.PI));
  const means: number[] = [];
  let negative = 0;
  const cut = -options.negativeCutoff * scale;
  nodes.forEach((th, l) => {
    const w = weights[l];
    means.push(dot(th, w));
    for (let j = 0; j < th.length; j++) {
      negative += w[j] * 0.5 * (1 + erf((cut - th[j]) / (sigma * Math.SQRT2)));
      // Skip kernel tails beyond 8σ (below 1e-14 of the peak).
      const a = max(0, floor(((th[j] - 8 * sigma - g0) / (g1 - g0)) * (options.gridPoints - 1)));
      const b = min(options.gridPoints - 1, ceil(((th[j] + 8 * sigma - g0) / (g1 - g0)) * (options.gridPoints - 1)));
      for (let g = a; g <= b; g++) {
        const z = (grid[g] - th[j]) / sigma;
        density[g] += w[j] * norm * exp(-0.5 * z * z);
      }
    }
  });
  const p = means.length;
  const mean = means.reduce((s, x) => s + x, 0) / p;
  const variance = p > 1 ? means.reduce((s, x) => s + (x - mean) * (x - mean), 0) / (p - 1) : NaN;
  return {
    grid,
    density,
    sigma,
    nodes,
    weights,
    mean,
    meanStandardError: Math.sqrt(variance / p),
    negativeShare: negative / p,
    negativeCutoff: options.negativeCutoff,
    scale,
    probes: p,
    products,
    stop,
  };
}

/**
 * Share of the estimated density's mass below `t`, with the same Gaussian broadening as the
 * plotted curve: (1/probes) Σ τ Φ((t − θ)/σ), Φ the normal CDF via erf (Abramowitz & Stegun 7.1).
 */
export function densityMassBelow(d: SpectralDensity, t: number): number {
  let s = 0;
  d.nodes.forEach((th, l) => {
    for (let j = 0; j < th.length; j++) s += d.weights[l][j] * 0.5 * (1 + erf((t - th[j]) / (d.sigma * Math.SQRT2)));
  });
  return s / d.probes;
}

/** Options of {@link hutchinsonTrace}. */
export interface TraceOptions extends IterationControl {
  /** Number of Rademacher probes. Default 32. */
  probes?: number;
  /** The operator's block products: probes go `size` at a time through one call (same samples). */
  block?: BlockProducts;
}

/** A stochastic trace estimate. */
export interface TraceEstimate {
  /** Mean of zᵀAz over the probes. */
  readonly estimate: number;
  /** Sample standard deviation of zᵀAz divided by √probes (NaN for one probe). */
  readonly standardError: number;
  /** The individual zᵀAz values. */
  readonly samples: Float64Array;
  /** Probes completed. */
  readonly probes: number;
  /** Operator products spent (one per probe). */
  readonly products: number;
  readonly stop: StopReason;
}

/**
 * Hutchinson's estimate tr(A) ≈ (1/N) Σ zᵀAz over Rademacher vectors z, with its standard error
 * (Hutchinson, Commun. Stat. Simul. Comput. 18(3), 1989).
 */
export function hutchinsonTrace(op: LinearOperator, n: number, rng: Rng, options: TraceOptions = {}): TraceEstimate {
  const probes = options.probes ?? 32;
  if (!Number.isInteger(probes) || probes < 1) throw new RangeError(`probes must be a positive integer, got ${probes}`);
  const block = options.block !== undefined && options.block.size > 1 ? options.block : null;
  const size = block === null ? 1 : Math.min(block.size, probes);
  const zs = Array.from({ length: size }, () => new Float64Array(n));
  const azs = Array.from({ length: size }, () => new Float64Array(n));
  const samples: number[] = [];
  let stop: StopReason = 'converged';
  for (let l = 0; l < probes; ) {
    if (stopRequested(options)) {
      stop = 'cancelled';
      break;
    }
    const k = Math.min(size, probes - l);
    for (let j = 0; j < k; j++) rng.rademacher(zs[j]);
    if (block === null || k === 1) op(zs[0], azs[0]);
    else block.apply(zs.slice(0, k), azs.slice(0, k));
    for (let j = 0; j < k; j++) samples.push(dot(zs[j], azs[j]));
    l += k;
    if (reportProgress(options, { phase: 'trace', done: l, total: probes, products: l }) && l < probes) {
      stop = 'cancelled';
      break;
    }
  }
  const p = samples.length;
  if (p === 0) throw new Error('trace estimate was cancelled before the first probe finished');
  const estimate = samples.reduce((s, x) => s + x, 0) / p;
  const variance = p > 1 ? samples.reduce((s, x) => s + (x - estimate) * (x - estimate), 0) / (p - 1) : NaN;
  return { estimate, standardError: Math.sqrt(variance / p), samples: Float64Array.from(samples), probes: p, products: p, stop };
}
