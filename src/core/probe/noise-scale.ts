/**
 * Gradient noise scale, simple form B = tr(Σ)/|G|² (McCandlish et al., "An Empirical Model of
 * Large-Batch Training", 2018), with G the full-batch gradient and Σ the covariance of the
 * gradient of one example drawn uniformly from the training rows.
 *
 * G is exact (one full-batch gradient). tr(Σ) = (1/N)·Σ_i |g_i − G|² over all N rows is estimated
 * from a seeded sample S of n rows drawn without replacement as (1/n)·Σ_{i∈S} |g_i − G|²: each
 * term's expectation is the population value, so the estimate is unbiased, and exact when n = N.
 * Per-example gradients g_i are the objective's gradient on the single row i (regularization is
 * the same in every g_i and cancels in g_i − G).
 *
 * Against the batch size b in use: b well below B (b < B/10) is in the regime where larger
 * batches speed training almost linearly; b well above B (b > 10·B) spends rows for little gain
 * (McCandlish et al. 2018; the factor is in `findings/thresholds.ts`).
 */
import { dot, type Objective } from '../objective';
import type { Rng } from '../rng';
import { drawSubset } from '../session/batches';
import { THRESHOLDS } from './findings/thresholds';

/** How the batch in use compares with the noise scale. */
export type BatchVerdict = 'below-noise-scale' | 'near-noise-scale' | 'above-noise-scale' | 'undefined';

/** Result of {@link gradientNoiseScale}. */
export interface NoiseScale {
  step: number | null;
  /** Rows whose per-example gradients were taken, and the training rows in all. */
  sampleRows: number;
  totalRows: number;
  /** tr(Σ) (estimate when sampled) and |G|² (exact). */
  traceCovariance: number;
  gradientSquared: number;
  /** B = tr(Σ)/|G|², null when |G| = 0. */
  noiseScale: number | null;
  /** Rows per update of the recipe (N at full batch). */
  batch: number;
  verdict: BatchVerdict;
}

/** Options of {@link gradientNoiseScale}. */
export interface NoiseScaleOptions {
  /** Most rows whose per-example gradients are taken (default 64; all rows when fewer). */
  sample?: number;
  /** Rows per update of the recipe (default: all rows). */
  batch?: number;
  /** Step the weights belong to, recorded in the result. */
  step?: number | null;
}

/**
 * The simple gradient noise scale of `objective` at `w` (see the module comment).
 *
 * @param rng - draws the row sample when the sample is smaller than the data set (pass a named fork).
 */
export function gradientNoiseScale(objective: Objective, w: Float64Array, rng: Rng, options: NoiseScaleOptions = {}): NoiseScale {
  const n = objective.rowCount;
  if (n === 0) throw new Error('the gradient noise scale needs data rows; this objective has none');
  const sample = Math.min(n, options.sample ?? 64);
  if (!Number.isInteger(sample) || sample < 1) throw new RangeError(`sample must be a positive integer, got ${options.sample}`);
  const batch = options.batch ?? n;
  const p = objective.parameterCount;
  const G = new Float64Array(p);
  objective.gradient(w, G);
  const rows = sample === n ? Int32Array.from({ length: n }, (_, i) => i) : drawSubset(rng, n, sample);
  const g = new Float64Array(p);
  const one = new Int32Array(1);
  let sum = 0;
  for (let k = 0; k < rows.length; k++) {
    one[0] = rows[k];
    objective.gradient(w, g, one);
    let s = 0;
    for (let i = 0; i < p; i++) {
      const d = g[i] - G[i];
      s += d * d;
    }
    sum += s;
  }
  const traceCovariance = sum / rows.length;
  const gradientSquared = dot(G, G);
  const noiseScale = gradientSquared > 0 ? traceCovariance / gradientSquared : null;
  const f = THRESHOLDS.noiseBatchFactor.value;
  let verdict: BatchVerdict = 'undefined';
  if (noiseScale !== null && Number.isFinite(noiseScale)) verdict = batch < noiseScale / f ? 'below-noise-scale' : batch > noiseScale * f ? 'above-noise-scale' : 'near-noise-scale';
  return { step: options.step ?? null, sampleRows: rows.length, totalRows: n, traceCovariance, gradientSquared, noiseScale, batch, verdict };
}
