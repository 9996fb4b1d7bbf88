/**
 * Eigen-solvers for a symmetric tridiagonal matrix T (diagonal d, subdiagonal e with
 * e[i] = T[i, i−1]): implicit QL with Wilkinson shifts for the whole spectrum, Sturm-sequence
 * bisection for selected eigenvalues and inverse iteration for their eigenvectors.
 *
 * References: Golub & Van Loan, *Matrix Computations*, 4th ed., §8.3 (implicit symmetric QR
 * step with Wilkinson shift, here in its QL orientation) and §8.4.1–8.4.2 (Sturm sequences,
 * bisection, inverse iteration); Wilkinson, *The Algebraic Eigenvalue Problem*, 1965, ch. 5.
 */
import type { Tridiagonal } from './householder';
import { eigenSpace, type EigenKernels } from './eigen-kernels';
import { sin } from '../elementary';

// Math functions bound once: global lookups inside hot loops are slow when the code runs in a
// vm context (as under jest), and binding them costs nothing elsewhere.
const { abs, max, min, sqrt } = Math;

/** Eigen-decomposition of a tridiagonal matrix: ascending values, optional vectors as rows. */
export interface TridiagonalEigen {
  /** Eigenvalues in ascending order. */
  readonly values: Float64Array;
  /** `vectors[k·n + j]` = component j of the unit eigenvector of `values[k]`, or null. */
  readonly vectors: Float64Array | null;
}

const EPS = 2.220446049250313e-16;
const MAX_SWEEPS = 60;
const SAFE_MIN = 2.2250738585072014e-308;

/**
 * All eigenvalues (and, when `vectors` is given, the rotated basis) of T by implicit QL with
 * Wilkinson shifts (Golub & Van Loan 4th ed., alg. 8.3.2 in QL orientation).
 *
 * @param t - the tridiagonal matrix (not modified).
 * @param vectors - n×`columns` row-major block Zᵀ whose rows are rotated along with T, or null
 *   for eigenvalues only. Starting from the identity (columns = n) gives the eigenvectors of T as
 *   rows; starting from one column e_j (columns = 1) gives only component j of every eigenvector
 *   at O(n²) cost, which is all a Lanczos residual bound or a quadrature weight needs.
 * @param columns - row length of `vectors` (default n).
 * @returns eigenvalues in ascending order; when `vectors` is given its rows are permuted to match.
 */
export function tridiagonalQL(t: Tridiagonal, vectors: Float64Array | null = null, columns?: number): Float64Array {
  const n = t.diagonal.length;
  const cols = columns ?? n;
  if (vectors !== null && vectors.length < n * cols) {
    throw new RangeError(`QL basis needs ${n * cols} entries for ${n} rows of ${cols}, got ${vectors.length}`);
  }
  const d = Float64Array.from(t.diagonal);
  // Long rows rotate in the eigen kernels' space: a sweep's rotations are recorded in rc/rs and
  // applied in one call (rotSweep); short ones (a Lanczos residual's single column) row by row.
  let kernels: EigenKernels | null = null;
  let z = vectors;
  const zOff = 0;
  let cOff = 0;
  let sOff = 0;
  if (vectors !== null && cols >= 32) {
    const space = eigenSpace(n * cols + 2 * n, cols);
    kernels = space.kernels;
    z = space.m;
    cOff = n * cols;
    sOff = n * cols + n;
    z.set(vectors.subarray(0, n * cols));
  }
  const rcs = z;
  // Internal layout: e[i] couples i and i+1.
  const e = new Float64Array(n);
  for (let i = 0; i + 1 < n; i++) e[i] = t.subdiagonal[i + 1];
  for (let l = 0; l < n; l++) {
    let sweeps = 0;
    for (;;) {
      let m = l;
      for (; m < n - 1; m++) {
        const dd = abs(d[m]) + abs(d[m + 1]);
        if (abs(e[m]) <= EPS * dd) break;
      }
      if (m === l) break;
      if (++sweeps > MAX_SWEEPS) {
        throw new Error(`tridiagonal QL did not converge for eigenvalue ${l} after ${MAX_SWEEPS} sweeps`);
      }
      // Wilkinson shift: the eigenvalue of the leading 2×2 block of the active part closer to d[l].
      let g = (d[l + 1] - d[l]) / (2 * e[l]);
      let r = pythag(g, 1);
      g = d[m] - d[l] + e[l] / (g + (g >= 0 ? r : -r));
      let s = 1;
      let c = 1;
      let p = 0;
      let i = m - 1;
      let deflated = false;
      for (; i >= l; i--) {
        const f = s * e[i];
        const b = c * e[i];
        r = pythag(f, g);
        e[i + 1] = r;
        if (r === 0) {
          d[i + 1] -= p;
          e[m] = 0;
          deflated = true;
          break;
        }
        s = f / r;
        c = g / r;
        g = d[i + 1] - p;
        r = (d[i] - g) * s + 2 * c * b;
        p = s * r;
        d[i + 1] = g + p;
        g = c * r - b;
        if (kernels !== null && rcs !== null) {
          rcs[cOff + i] = c;
          rcs[sOff + i] = s;
        } else if (z !== null) rotateRows(z, cols, i, c, s);
      }
      // Rotations m−1 … i+1 were formed (i+1 = l after a full sweep, or just above a deflation).
      if (kernels !== null && i + 1 <= m - 1) kernels.rotSweep(zOff, cols, cols, cOff, sOff, i + 1, m - 1);
      if (deflated) continue;
      d[l] -= p;
      e[l] = g;
      e[m] = 0;
    }
  }
  if (kernels !== null && vectors !== null && z !== null) vectors.set(z.subarray(0, n * cols));
  sortAscending(d, vectors, n, cols);
  return d;
}

/** √(a² + b²) without overflow or harmful underflow (faster than the variadic Math.hypot). */
function pythag(a: number, b: number): number {
  const x = abs(a);
  const y = abs(b);
  if (x > y) {
    const t = y / x;
    return x * sqrt(1 + t * t);
  }
  if (y === 0) return 0;
  const t = x / y;
  return y * sqrt(1 + t * t);
}

/** Rows i, i+1 of Zᵀ ← the Givens rotation (c, s) of the QL step, over contiguous memory. */
function rotateRows(z: Float64Array, cols: number, i: number, c: number, s: number): void {
  const a = i * cols;
  const b = a + cols;
  for (let k = 0; k < cols; k++) {
    const zi = z[a + k];
    const f = z[b + k];
    z[b + k] = s * zi + c * f;
    z[a + k] = c * zi - s * f;
  }
}

function sortAscending(d: Float64Array, vectors: Float64Array | null, n: number, cols: number): void {
  const order = Array.from({ length: n }, (_, i) => i).sort((x, y) => d[x] - d[y]);
  if (order.every((v, i) => v === i)) return;
  const dv = Float64Array.from(order, (k) => d[k]);
  d.set(dv);
  if (vectors !== null) {
    const copy = Float64Array.from(vectors.subarray(0, n * cols));
    for (let k = 0; k < n; k++) vectors.set(copy.subarray(order[k] * cols, order[k] * cols + cols), k * cols);
  }
}

/** Eigenvalues and (optionally) eigenvectors of T by {@link tridiagonalQL} from the identity basis. */
export function tridiagonalEigen(t: Tridiagonal, wantVectors: boolean): TridiagonalEigen {
  const n = t.diagonal.length;
  let z: Float64Array | null = null;
  if (wantVectors) {
    z = new Float64Array(n * n);
    for (let i = 0; i < n; i++) z[i * n + i] = 1;
  }
  const values = tridiagonalQL(t, z);
  return { values, vectors: z };
}

/** Gershgorin interval [lo, hi] that contains every eigenvalue of T (Golub & Van Loan §7.2.1). */
export function gershgorinBounds(t: Tridiagonal): [number, number] {
  const { diagonal: d, subdiagonal: e } = t;
  const n = d.length;
  let lo = Infinity;
  let hi = -Infinity;
  for (let i = 0; i < n; i++) {
    const r = (i > 0 ? abs(e[i]) : 0) + (i + 1 < n ? abs(e[i + 1]) : 0);
    lo = min(lo, d[i] - r);
    hi = max(hi, d[i] + r);
  }
  return [lo, hi];
}

/**
 * Number of eigenvalues of T strictly below x, from the signs of the LDLᵀ pivots of T − xI
 * (Sturm sequence count; Golub & Van Loan 4th ed., §8.4.1). `pivmin` replaces a zero pivot.
 */
export function sturmCount(t: Tridiagonal, x: number, pivmin: number): number {
  const { diagonal: d, subdiagonal: e } = t;
  let count = 0;
  let q = d[0] - x;
  if (abs(q) < pivmin) q = -pivmin;
  if (q < 0) count++;
  for (let i = 1; i < d.length; i++) {
    q = d[i] - x - (e[i] * e[i]) / q;
    if (abs(q) < pivmin) q = -pivmin;
    if (q < 0) count++;
  }
  return count;
}

/** Smallest pivot magnitude allowed in a Sturm count: safe minimum · max(1, max e²) (LAPACK's pivmin). */
function pivotFloor(t: Tridiagonal): number {
  let m = 1;
  for (let i = 1; i < t.subdiagonal.length; i++) m = max(m, t.subdiagonal[i] * t.subdiagonal[i]);
  return SAFE_MIN * m;
}

/**
 * Eigenvalues number `first`..`last` (0-based, ascending, inclusive) of T by Sturm bisection,
 * each to an absolute width of about 2ε·max|λ| (Golub & Van Loan 4th ed., §8.4.1).
 */
export function bisectEigenvalues(t: Tridiagonal, first: number, last: number): Float64Array {
  const n = t.diagonal.length;
  if (!Number.isInteger(first) || !Number.isInteger(last) || first < 0 || last >= n || first > last) {
    throw new RangeError(`eigenvalue indices must satisfy 0 <= first <= last < ${n}, got first=${first}, last=${last}`);
  }
  const [glo, ghi] = gershgorinBounds(t);
  const span = max(abs(glo), abs(ghi));
  const pivmin = pivotFloor(t);
  const lo0 = glo - 2 * EPS * span - pivmin;
  const hi0 = ghi + 2 * EPS * span + pivmin;
  const out = new Float64Array(last - first + 1);
  let lo = lo0;
  for (let k = first; k <= last; k++) {
    let hi = hi0;
    // Eigenvalue k is the smallest x with count(x) > k; lo never exceeds it (ascending order).
    for (let it = 0; it < 200; it++) {
      const mid = 0.5 * (lo + hi);
      if (hi - lo <= 2 * EPS * max(abs(lo), abs(hi)) + pivmin || mid === lo || mid === hi) break;
      if (sturmCount(t, mid, pivmin) > k) hi = mid;
      else lo = mid;
    }
    out[k - first] = 0.5 * (lo + hi);
    // Next search starts just below this eigenvalue (a repeated eigenvalue yields the same point).
    lo = min(lo, out[k - first]);
  }
  return out;
}

/**
 * Unit eigenvectors of T for the given (accurate) eigenvalues by inverse iteration on T − λI
 * with partially pivoted tridiagonal LU; vectors of eigenvalues closer than 1e-3·‖T‖ are
 * re-orthogonalized against each other (Golub & Van Loan 4th ed., §8.4.2; LAPACK dstein's rule).
 *
 * @returns k×n row-major, row j the eigenvector of `values[j]` (values must be ascending).
 */
export function tridiagonalInverseIteration(t: Tridiagonal, values: Float64Array): Float64Array {
  const { diagonal: d, subdiagonal: e } = t;
  const n = d.length;
  const k = values.length;
  const out = new Float64Array(k * n);
  const [glo, ghi] = gershgorinBounds(t);
  const tnorm = max(abs(glo), abs(ghi), Number.MIN_VALUE);
  const clusterGap = 1e-3 * tnorm;
  // LU storage: U has main u0, first and second superdiagonals u1, u2; multipliers ml; pivot flags.
  const u0 = new Float64Array(n);
  const u1 = new Float64Array(n);
  const u2 = new Float64Array(n);
  const ml = new Float64Array(n);
  const swapped = new Uint8Array(n);
  const x = new Float64Array(n);
  let clusterStart = 0;
  let previousShift = -Infinity;
  for (let j = 0; j < k; j++) {
    if (j > 0 && values[j] - values[j - 1] > clusterGap) clusterStart = j;
    // Separate equal eigenvalues slightly so that each solve sees a distinct shift.
    let lambda = values[j];
    if (j > clusterStart && lambda <= previousShift + 10 * EPS * tnorm) lambda = previousShift + 10 * EPS * tnorm;
    previousShift = lambda;
    factorShifted(d, e, lambda, tnorm, u0, u1, u2, ml, swapped);
    // Deterministic, generic start vector (no component pattern aligned with T's structure).
    for (let i = 0; i < n; i++) x[i] = 1 + 0.5 * sin(1.7 * i + 0.3 * j + 1);
    for (let it = 0; it < 5; it++) {
      normalize(x);
      solveShifted(n, u0, u1, u2, ml, swapped, x);
      for (let c = clusterStart; c < j; c++) orthogonalizeAgainst(x, out, c * n, n);
    }
    normalize(x);
    for (let c = clusterStart; c < j; c++) orthogonalizeAgainst(x, out, c * n, n);
    normalize(x);
    out.set(x, j * n);
  }
  return out;
}

function factorShifted(
  d: Float64Array,
  e: Float64Array,
  lambda: number,
  tnorm: number,
  u0: Float64Array,
  u1: Float64Array,
  u2: Float64Array,
  ml: Float64Array,
  swapped: Uint8Array
): void {
  const n = d.length;
  const tiny = EPS * tnorm;
  // Row i of the active 2-row window: [a, b, c] in columns i, i+1, i+2.
  let a = d[0] - lambda;
  let b = n > 1 ? e[1] : 0;
  for (let i = 0; i < n; i++) {
    if (i === n - 1) {
      u0[i] = abs(a) < tiny ? tiny : a;
      u1[i] = 0;
      u2[i] = 0;
      swapped[i] = 0;
      break;
    }
    const sub = e[i + 1];
    const nd = d[i + 1] - lambda;
    const nb = i + 2 < n ? e[i + 2] : 0;
    if (abs(sub) > abs(a)) {
      // Swap rows i and i+1 (partial pivoting).
      swapped[i] = 1;
      const m = a / sub;
      ml[i] = m;
      u0[i] = sub;
      u1[i] = nd;
      u2[i] = nb;
      a = b - m * nd;
      b = -m * nb;
    } else {
      swapped[i] = 0;
      const piv = abs(a) < tiny ? tiny : a;
      const m = sub / piv;
      ml[i] = m;
      u0[i] = piv;
      u1[i] = b;
      u2[i] = 0;
      a = nd - m * b;
      b = nb;
    }
  }
}

function solveShifted(
  n: number,
  u0: Float64Array,
  u1: Float64Array,
  u2: Float64Array,
  ml: Float64Array,
  swapped: Uint8Array,
  x: Float64Array
): void {
  for (let i = 0; i + 1 < n; i++) {
    if (swapped[i]) {
      const t = x[i];
      x[i] = x[i + 1];
      x[i + 1] = t - ml[i] * x[i + 1];
    } else {
      x[i + 1] -= ml[i] * x[i];
    }
  }
  for (let i = n - 1; i >= 0; i--) {
    let s = x[i];
    if (i + 1 < n) s -= u1[i] * x[i + 1];
    if (i + 2 < n) s -= u2[i] * x[i + 2];
    x[i] = s / u0[i];
  }
  // Rescale to keep the iterate representable when the shift is an eigenvalue to working precision.
  let m = 0;
  for (let i = 0; i < n; i++) m = max(m, abs(x[i]));
  if (m > 0 && Number.isFinite(m)) for (let i = 0; i < n; i++) x[i] /= m;
}

function normalize(x: Float64Array): void {
  let s = 0;
  for (let i = 0; i < x.length; i++) s += x[i] * x[i];
  const r = sqrt(s);
  if (r > 0) for (let i = 0; i < x.length; i++) x[i] /= r;
}

function orthogonalizeAgainst(x: Float64Array, basis: Float64Array, off: number, n: number): void {
  let s = 0;
  for (let i = 0; i < n; i++) s += x[i] * basis[off + i];
  for (let i = 0; i < n; i++) x[i] -= s * basis[off + i];
}

/** One probe's Gauss quadrature rule: nodes θ_j and weights τ_j (summing to 1). */
export interface QuadratureRule {
  readonly nodes: Float64Array;
  readonly weights: Float64Array;
}

/**
 * The Gauss rule of m Lanczos steps from a unit vector v: the eigenvalues θ_j of T_m and the
 * squared first components τ_j = S[0, j]² of its eigenvectors (Golub & Meurant 2010, ch. 6).
 * `beta[j]` couples steps j and j + 1; entries from m − 1 on are ignored.
 */
export function gaussRule(alpha: readonly number[] | Float64Array, beta: readonly number[] | Float64Array): QuadratureRule {
  const m = alpha.length;
  const sub = new Float64Array(m);
  for (let j = 1; j < m; j++) sub[j] = beta[j - 1];
  const first = new Float64Array(m);
  first[0] = 1;
  const nodes = tridiagonalQL({ diagonal: Float64Array.from(alpha), subdiagonal: sub }, first, 1);
  for (let j = 0; j < m; j++) first[j] *= first[j];
  return { nodes, weights: first };
}
