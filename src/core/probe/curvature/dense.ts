/**
 * Dense curvature path for small models: the full P×P Hessian (or Gauss-Newton matrix) from P
 * exact products with the unit vectors, symmetrized, and its complete spectrum from the dense
 * symmetric eigen-solver (Householder + implicit QL; Golub & Van Loan 4th ed., ch. 8).
 */
import type { Objective, Rows } from '../../objective';
import type { IterationControl, StopReason } from '../../linalg/operator';
import { reportProgress, stopRequested } from '../../linalg/operator';
import { symmetricEigen } from '../../linalg/symmetric-eigen';
import type { CurvatureKind } from './operator';
import { curvatureOperator } from './operator';

/** Default largest P for the dense path (a 2000×2000 matrix is 32 MB and ~10 s of eigen-solve). */
export const DENSE_LIMIT = 2000;

/** Options of {@link denseHessian}. */
export interface DenseHessianOptions extends IterationControl {
  /** Largest P accepted (default {@link DENSE_LIMIT}). */
  limit?: number;
  /** Positive diagonal D: build D^{1/2}·M·D^{1/2} instead of M (see `curvatureOperator`). */
  scaling?: Float64Array;
  /** Shift s: build M + s·I (before scaling). */
  shift?: number;
}

/** A dense, symmetrized curvature matrix. */
export interface DenseHessian {
  /** Order P. */
  readonly n: number;
  /** (M + Mᵀ)/2, row-major P×P. */
  readonly matrix: Float64Array;
  /** ‖M − Mᵀ‖_F / ‖M‖_F of the matrix as computed column by column (0 when M = 0): a quality number. */
  readonly asymmetry: number;
  /** Products spent (P, or fewer when cancelled). */
  readonly products: number;
  /** `converged` when complete, `cancelled` otherwise (then `matrix` is incomplete). */
  readonly stop: StopReason;
}

/**
 * The P×P Hessian (kind `hessian`) or Gauss-Newton matrix (kind `gauss-newton`) of `objective`
 * at `w` on `rows`, column j = M·e_j by one exact product each (Pearlmutter 1994), then
 * symmetrized as (M + Mᵀ)/2 with the asymmetry ‖M − Mᵀ‖_F/‖M‖_F reported.
 *
 * @throws when P exceeds `options.limit` (default 2000).
 */
export function denseHessian(
  objective: Objective,
  w: Float64Array,
  rows?: Rows,
  kind: CurvatureKind = 'hessian',
  options: DenseHessianOptions = {}
): DenseHessian {
  const n = objective.parameterCount;
  const limit = options.limit ?? DENSE_LIMIT;
  if (n > limit) {
    throw new RangeError(`the dense ${kind} needs P <= ${limit} parameters, this objective has ${n}; raise the limit or use the Lanczos path`);
  }
  const op = curvatureOperator(objective, w, { rows, kind, scaling: options.scaling, shift: options.shift });
  const m = new Float64Array(n * n);
  // Neighbouring columns go through one block pass: their unit vectors mostly share zero layer blocks.
  const size = Math.min(op.blockSize, n);
  const es = Array.from({ length: size }, () => new Float64Array(n));
  const cols = Array.from({ length: size }, () => new Float64Array(n));
  let stop: StopReason = 'converged';
  for (let j = 0; j < n; j += size) {
    if (stopRequested(options)) {
      stop = 'cancelled';
      break;
    }
    const k = Math.min(size, n - j);
    for (let c = 0; c < k; c++) es[c][j + c] = 1;
    if (k === 1) op.apply(es[0], cols[0]);
    else op.applyBlock(es.slice(0, k), cols.slice(0, k));
    for (let c = 0; c < k; c++) {
      es[c][j + c] = 0;
      const col = cols[c];
      for (let i = 0; i < n; i++) {
        if (!Number.isFinite(col[i])) throw new Error(`the ${kind} product of column ${j + c} is not finite (entry ${i} is ${col[i]}); the weights may have diverged`);
      }
      // Column j of M stored as row j; symmetrization below makes the orientation irrelevant.
      m.set(col, (j + c) * n);
    }
    if (reportProgress(options, { phase: 'dense-hessian', done: j + k, total: n, products: j + k }) && j + k < n) {
      stop = 'cancelled';
      break;
    }
  }
  let diff = 0;
  let total = 0;
  for (let i = 0; i < n; i++) {
    total += m[i * n + i] * m[i * n + i];
    for (let j = 0; j < i; j++) {
      const a = m[i * n + j];
      const b = m[j * n + i];
      diff += 2 * (a - b) * (a - b);
      total += a * a + b * b;
      const s = 0.5 * (a + b);
      m[i * n + j] = s;
      m[j * n + i] = s;
    }
  }
  return { n, matrix: m, asymmetry: total > 0 ? Math.sqrt(diff / total) : 0, products: op.count(), stop };
}

/** The complete spectrum of a dense curvature matrix. */
export interface DenseSpectrum {
  /** All eigenvalues, ascending. */
  readonly eigenvalues: Float64Array;
  /** Unit eigenvectors as rows, row k for `eigenvalues[vectorOffset + k]`, when requested. */
  readonly vectors: Float64Array | null;
  /** Index of the eigenvalue of row 0 of `vectors` (P − topVectors when only the top ones were asked for). */
  readonly vectorOffset: number;
  /** Asymmetry of the computed matrix (see {@link DenseHessian}). */
  readonly asymmetry: number;
  /** Products spent building the matrix. */
  readonly products: number;
  readonly stop: StopReason;
}

/**
 * {@link denseHessian} followed by all eigenvalues (and optionally eigenvectors) by Householder
 * tridiagonalization and implicit QL (Golub & Van Loan 4th ed., alg. 8.3.1–8.3.2). `vectors: true`
 * gives all eigenvectors (O(P³)); `topVectors: k` only the k largest (inverse iteration, O(k·P²)).
 */
export function denseSpectrum(
  objective: Objective,
  w: Float64Array,
  rows?: Rows,
  kind: CurvatureKind = 'hessian',
  options: DenseHessianOptions & { vectors?: boolean; topVectors?: number } = {}
): DenseSpectrum {
  const h = denseHessian(objective, w, rows, kind, options);
  if (h.stop === 'cancelled') return { eigenvalues: new Float64Array(0), vectors: null, vectorOffset: 0, asymmetry: h.asymmetry, products: h.products, stop: h.stop };
  const eig = symmetricEigen(h.matrix, h.n, { vectors: options.vectors === true, topVectors: options.topVectors, overwrite: true });
  return { eigenvalues: eig.values, vectors: eig.vectors, vectorOffset: eig.vectorOffset, asymmetry: h.asymmetry, products: h.products, stop: h.stop };
}
