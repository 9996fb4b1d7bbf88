/**
 * Dense symmetric eigen-solver: Householder tridiagonalization followed by implicit QL with
 * Wilkinson shifts (all eigenvalues, optional eigenvectors), or Sturm bisection plus inverse
 * iteration (selected eigenpairs). Golub & Van Loan, *Matrix Computations*, 4th ed., ch. 8.
 *
 * Matrices are row-major `Float64Array`s of n·n entries; only the lower triangle (j ≤ i) is
 * read, so an input whose upper triangle is stale is fine. Eigenvectors are returned as the
 * *rows* of an n×n (or k×n) array, row k belonging to `values[k]`, so that each vector is
 * contiguous in memory.
 */
import { applyReflectors, tridiagonalForm, tridiagonalize } from './householder';
import type { HouseholderReduction } from './householder';
import { bisectEigenvalues, tridiagonalInverseIteration, tridiagonalQL } from './tridiagonal';
import { rootFreeEigenvalues } from './root-free-ql';

/** Options of {@link symmetricEigen}. */
export interface SymmetricEigenOptions {
  /** Also compute eigenvectors (accumulates the Householder and Givens transforms). Default false. */
  vectors?: boolean;
  /** Allow the solver to overwrite `a` instead of copying it. Default false. */
  overwrite?: boolean;
  /**
   * Compute only the eigenvectors of the `topVectors` largest eigenvalues, by inverse iteration
   * on T and back-transformation (O(n²) each instead of the O(n³) full accumulation). Ignored
   * when `vectors` is true.
   */
  topVectors?: number;
}

/** Eigen-decomposition A = V D Vᵀ of a symmetric matrix. */
export interface SymmetricEigenResult {
  /** Order n. */
  readonly n: number;
  /** Eigenvalues in ascending order. */
  readonly values: Float64Array;
  /** Row k (offset k·n) is the unit eigenvector of `values[vectorOffset + k]`; null unless requested. */
  readonly vectors: Float64Array | null;
  /** Index into `values` of the eigenvalue of row 0 of `vectors` (0 for a full set). */
  readonly vectorOffset: number;
}

function checkSquare(a: Float64Array, n: number): void {
  if (!Number.isInteger(n) || n < 0) throw new RangeError(`matrix order must be a non-negative integer, got ${n}`);
  if (a.length !== n * n) throw new RangeError(`a symmetric matrix of order ${n} needs ${n * n} entries, got ${a.length}`);
}

function reduce(a: Float64Array, n: number, overwrite: boolean): HouseholderReduction {
  checkSquare(a, n);
  return tridiagonalize(overwrite ? a : Float64Array.from(a), n);
}

/**
 * All eigenvalues (ascending) and optionally eigenvectors of the symmetric n×n matrix `a`:
 * Householder tridiagonalization, then implicit QL with Wilkinson shifts
 * (Golub & Van Loan 4th ed., alg. 8.3.1 and 8.3.2; for values alone its root-free form, as
 * LAPACK's dsterf). Cost ≈ 4n³/3 flops for values only.
 */
export function symmetricEigen(a: Float64Array, n: number, options: SymmetricEigenOptions = {}): SymmetricEigenResult {
  const k = Math.min(n, options.topVectors ?? 0);
  if (options.vectors !== true && k === 0) {
    // Values alone need no reflectors: `a` is read where it is, never copied nor written; and
    // no rotations, so the root-free QL (the rotation QL where T cannot be squared safely).
    checkSquare(a, n);
    const t = tridiagonalForm(a, n);
    return { n, values: rootFreeEigenvalues(t) ?? tridiagonalQL(t), vectors: null, vectorOffset: 0 };
  }
  const red = reduce(a, n, options.overwrite === true);
  if (options.vectors !== true) {
    const values = tridiagonalQL(red);
    if (!Number.isInteger(k) || k < 0) throw new RangeError(`topVectors must be a non-negative integer, got ${options.topVectors}`);
    const vectors = tridiagonalInverseIteration(red, values.slice(n - k));
    applyReflectors(red, vectors, k);
    return { n, values, vectors, vectorOffset: n - k };
  }
  const z = new Float64Array(n * n);
  for (let i = 0; i < n; i++) z[i * n + i] = 1;
  const values = tridiagonalQL(red, z);
  applyReflectors(red, z, n);
  return { n, values, vectors: z, vectorOffset: 0 };
}

/** All eigenvalues of the symmetric n×n row-major matrix `a`, ascending (see {@link symmetricEigen}). */
export function eigenvalues(a: Float64Array, n: number): Float64Array {
  return symmetricEigen(a, n).values;
}

/**
 * Eigenpairs number `first`..`last` (0-based in ascending order, inclusive) of the symmetric
 * matrix `a` by tridiagonalization, Sturm bisection and inverse iteration
 * (Golub & Van Loan 4th ed., §8.4.1–8.4.2). Negative indices count from the top: −1 is the
 * largest eigenvalue, so `(a, n, -3, -1)` returns the three largest. `values` holds only the
 * selected eigenvalues (ascending), row k of `vectors` belongs to `values[k]`.
 */
export function selectedEigenpairs(
  a: Float64Array,
  n: number,
  first: number,
  last: number,
  options: { vectors?: boolean; overwrite?: boolean } = {}
): SymmetricEigenResult {
  checkSquare(a, n);
  const lo = first < 0 ? n + first : first;
  const hi = last < 0 ? n + last : last;
  if (!Number.isInteger(lo) || !Number.isInteger(hi) || lo < 0 || hi >= n || lo > hi) {
    throw new RangeError(`eigenpair indices must satisfy 0 <= first <= last < ${n} after counting negatives from the top, got first=${first}, last=${last}`);
  }
  const red = reduce(a, n, options.overwrite === true);
  const values = bisectEigenvalues(red, lo, hi);
  if (options.vectors === false) return { n, values, vectors: null, vectorOffset: 0 };
  const vectors = tridiagonalInverseIteration(red, values);
  applyReflectors(red, vectors, values.length);
  return { n, values, vectors, vectorOffset: 0 };
}

/** Row-major `Float64Array` from an array of equal-length rows (checks that it is square). */
export function fromRows(rows: readonly (readonly number[])[]): Float64Array {
  const n = rows.length;
  const out = new Float64Array(n * n);
  rows.forEach((row, i) => {
    if (row.length !== n) throw new RangeError(`row ${i} has ${row.length} entries, expected ${n} for a square matrix`);
    out.set(row, i * n);
  });
  return out;
}
