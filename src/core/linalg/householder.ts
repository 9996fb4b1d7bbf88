/**
 * Householder reduction of a dense symmetric matrix to tridiagonal form, A = Q T Qᵀ, blocked.
 *
 * Reference: Golub & Van Loan, *Matrix Computations*, 4th ed., §8.3.1 (Householder
 * tridiagonalization); the blocking is LAPACK's (dsytrd with dlatrd, Dongarra, Hammarling &
 * Sorensen, "Block reduction of matrices to condensed forms for eigenvalue computations", 1989).
 * Our variant works on the rows of a row-major lower triangle, from the last row upwards, so
 * that every inner loop runs over contiguous memory:
 *
 * 1. Step i (i = n−1 … 2) takes x = A[i, 0..i−1] and builds the reflector
 *    H_i = I − u uᵀ / h with H_i x = α e_{i−1}; α becomes the subdiagonal entry T[i, i−1].
 * 2. The leading i×i block B becomes H_i B H_i = B − u qᵀ − q uᵀ with p = B u / h,
 *    K = uᵀp / (2h), q = p − K u.
 * 3. Blocking: the rank-2 updates of up to 32 consecutive steps (a panel) are not applied one
 *    by one. Their u and q are kept, and step i works with the stored B minus the panel's
 *    pending terms: row i is brought up to date alone, and p = (B_stored u − Σ_k u_k (q_kᵀu)
 *    − Σ_k q_k (u_kᵀu)) / h. After the panel one rank-2k update of the rows still to come
 *    applies all of them. The matrix-vector product (memory-bound) then only reads the matrix,
 *    and the update (compute-bound, the register tiles of `core/wasm/eigen.wat`) writes each
 *    entry once per panel instead of once per step.
 *
 * The reflector u of step i stays in A[i, 0..i−1] (with h in `h[i]`), so Q = H_{n−1} ⋯ H_2 can
 * be applied later to any vector at O(n²) cost ({@link applyReflectors}). The inner loops run in
 * WebAssembly SIMD where the engine has it (`eigen-kernels.ts`), else in plain JavaScript; the
 * two agree to rounding.
 */

import { eigenSpace, syr2kWork, type EigenKernels } from './eigen-kernels';

// Math functions bound once: global lookups inside hot loops are slow when the code runs in a
// vm context (as under jest), and binding them costs nothing elsewhere.
const { abs, max, min, sqrt } = Math;

/** Tridiagonal matrix: `diagonal[i]` = T[i, i]; `subdiagonal[i]` = T[i, i−1] (`subdiagonal[0]` = 0). */
export interface Tridiagonal {
  readonly diagonal: Float64Array;
  readonly subdiagonal: Float64Array;
}

/** Result of {@link tridiagonalize}: T and the compact reflectors that define Q. */
export interface HouseholderReduction extends Tridiagonal {
  /** Order n. */
  readonly n: number;
  /** The working matrix: row i, columns 0..i−1 hold the reflector vector u of step i. */
  readonly reflectors: Float64Array;
  /** h[i] = uᵀu / 2 of step i, or 0 when step i needed no reflection. */
  readonly h: Float64Array;
}

/** Options of {@link tridiagonalize}. */
export interface TridiagonalizeOptions {
  /** Use the WebAssembly SIMD kernels when available (default true; false forces the plain-JavaScript loops). */
  simd?: boolean;
  /**
   * Steps per panel (default {@link panelSize}: 32, 48 from order 1 000; 1 applies every update
   * at once, as the unblocked algorithm does).
   */
  block?: number;
}

/**
 * Steps whose updates are deferred together (the rank-2k update then does 2·nb terms per entry)
 * for a matrix of order n: 32, and 48 from n = 1 000, where fewer passes of the update over a
 * triangle that no longer fits the caches measured 5–10 % faster at n = 1 000 and 2 000 (load
 * average 7–9, so roughly; test/bench/BENCHMARKS.md). Smaller matrices, among them every dense
 * Hessian of the demo notebooks, keep 32 and the bits of earlier releases.
 * @param n - order of the matrix.
 * @returns the default panel size.
 */
export function panelSize(n: number): number {
  return n >= 1000 ? 48 : 32;
}

/**
 * Reduces the symmetric matrix `a` (n×n, row-major; only the lower triangle j ≤ i is read)
 * to tridiagonal T = Qᵀ A Q by blocked Householder reflections (Golub & Van Loan 4th ed.,
 * §8.3.1; LAPACK dsytrd's blocking).
 *
 * @param a - n×n row-major matrix; **overwritten** with the reflectors below the diagonal
 *   (entries above it are left undefined). Copy it first to keep it.
 * @param n - order of the matrix.
 * @returns T and the reflectors, stored in `a`.
 */
export function tridiagonalize(a: Float64Array, n: number, options: TridiagonalizeOptions = {}): HouseholderReduction {
  const { red, m } = packAndReduce(a, n, options);
  for (let i = 0; i < n; i++) a.set(m.subarray((i * (i + 1)) / 2, (i * (i + 1)) / 2 + i + 1), i * n);
  return { ...red, reflectors: a };
}

/**
 * T of {@link tridiagonalize} without the reflectors: `a` is only read (no copy of it is made
 * and nothing is written back), for callers that need the eigenvalues alone. Same arithmetic,
 * so the same bits as `tridiagonalize`.
 * @returns the diagonal, the subdiagonal and h of each step.
 */
export function tridiagonalForm(a: Float64Array, n: number, options: TridiagonalizeOptions = {}): Omit<HouseholderReduction, 'reflectors'> {
  return packAndReduce(a, n, options).red;
}

/** Packs A's lower triangle into the kernels' space and reduces it there; the space's array holds the reflectors after. */
function packAndReduce(a: Float64Array, n: number, options: TridiagonalizeOptions): { red: Omit<HouseholderReduction, 'reflectors'>; m: Float64Array } {
  if (!Number.isInteger(n) || n < 0) throw new RangeError(`matrix order must be a non-negative integer, got ${n}`);
  if (a.length < n * n) throw new RangeError(`matrix storage needs ${n * n} entries for order ${n}, got ${a.length}`);
  const nb = options.block ?? panelSize(n);
  if (!Number.isInteger(nb) || nb < 1) throw new RangeError(`block must be a positive integer, got ${options.block}`);
  // Space: [A's lower triangle packed, row i at i(i+1)/2 | Uᵀ (nb rows of n) | Qᵀ (nb rows) | Uᵀ
  // again | p | coefficients (2·nb) | dots (2·nb) | the update's packing scratch]. Packed rows make the leading block one
  // sequential stream; [Uᵀ; Qᵀ] and [Qᵀ; Uᵀ] are then both contiguous, so the end-of-panel
  // update is one product of 2·nb terms per entry.
  const tri = (n * (n + 1)) / 2;
  const after = tri + 3 * nb * n;
  const lay = { a: 0, ut: tri, qt: tri + nb * n, ut2: tri + 2 * nb * n, p: after, coef: after + n, dots: after + n + 2 * nb, work: after + n + 4 * nb };
  const space = eigenSpace(lay.work + syr2kWork(n, 2 * nb), max(n, 1), options.simd !== false);
  const m = space.m;
  for (let i = 0; i < n; i++) m.set(a.subarray(i * n, i * n + i + 1), (i * (i + 1)) / 2);
  return { red: reduce(m, space.kernels, n, nb, lay), m };
}

interface Layout {
  a: number;
  ut: number;
  qt: number;
  ut2: number;
  p: number;
  coef: number;
  dots: number;
  work: number;
}

function reduce(m: Float64Array, k: EigenKernels, n: number, nb: number, lay: Layout): Omit<HouseholderReduction, 'reflectors'> {
  const d = new Float64Array(n);
  const e = new Float64Array(n);
  const h = new Float64Array(n);
  const { ut, qt, ut2, p, coef, dots, work } = lay;
  let c = 0; // reflectors in the current panel
  for (let i = n - 1; i >= 0; i--) {
    const row = (i * (i + 1)) / 2;
    // 1. Row i with the panel's pending updates: A[i, j] −= Σ_k (u_k[i] q_k[j] + q_k[i] u_k[j]), j ≤ i.
    if (c > 0) {
      for (let t = 0; t < c; t++) {
        m[coef + t] = m[ut + t * n + i];
        m[coef + nb + t] = m[qt + t * n + i];
      }
      k.subtractRows(row, qt, n, coef, c, i + 1);
      k.subtractRows(row, ut, n, coef + nb, c, i + 1);
    }
    d[i] = m[row + i];
    if (i === 0) break;
    // 2. Householder vector for x = A[i, 0..i−1], mapping x to α e_{i−1}.
    let scale = 0;
    for (let j = 0; j < i; j++) scale = max(scale, abs(m[row + j]));
    let hi = 0;
    if (i === 1 || scale === 0) {
      e[i] = m[row + i - 1];
    } else {
      let ss = 0;
      for (let j = 0; j < i; j++) {
        const t = m[row + j] / scale;
        ss += t * t;
      }
      const sigma = scale * sqrt(ss);
      const last = m[row + i - 1];
      const alpha = last >= 0 ? -sigma : sigma;
      hi = sigma * sigma - alpha * last;
      m[row + i - 1] = last - alpha;
      e[i] = alpha;
    }
    h[i] = hi;
    if (hi !== 0) {
      // 3. p = (B_stored u − Σ_k u_k (q_kᵀu) − Σ_k q_k (u_kᵀu)) / h over the leading i entries.
      k.symv(0, i, row, p);
      if (c > 0) {
        k.dots(dots, qt, n, c, row, i);
        k.dots(dots + nb, ut, n, c, row, i);
        k.subtractRows(p, ut, n, dots, c, i);
        k.subtractRows(p, qt, n, dots + nb, c, i);
      }
      let up = 0;
      for (let j = 0; j < i; j++) {
        m[p + j] /= hi;
        up += m[row + j] * m[p + j];
      }
      const kk = up / (2 * hi);
      const uo = ut + c * n;
      const qo = qt + c * n;
      const u2 = ut2 + c * n;
      for (let j = 0; j < i; j++) {
        const u = m[row + j];
        m[uo + j] = u;
        m[u2 + j] = u;
        m[qo + j] = m[p + j] - kk * u;
      }
      c++;
    }
    // 4. End of a panel: one rank-2k update of the rows still to come (0..i−1). A last, partial
    //    panel needs none: step 1 brings each remaining row up to date.
    if (c === nb) {
      k.syr2k(0, i, ut, qt, n, 2 * c, work); // [Uᵀ; Qᵀ] against [Qᵀ; Uᵀ]
      c = 0;
    }
  }
  return { n, diagonal: d, subdiagonal: e, h };
}

/**
 * Applies Q = H_{n−1} ⋯ H_2 of a {@link HouseholderReduction} to `count` vectors stored as the
 * rows of `v` (row k at offset k·n), in place: v_k ← Q v_k. Turns eigenvectors of T into
 * eigenvectors of A (Golub & Van Loan 4th ed., §5.1.6, applying a factored Q).
 */
export function applyReflectors(red: HouseholderReduction, v: Float64Array, count: number, options: { simd?: boolean } = {}): void {
  const { n, reflectors: a, h } = red;
  if (n === 0 || count === 0) return;
  // Blocks of vectors small enough to stay in cache while every reflector streams past once.
  const block = max(1, Math.floor(VECTOR_BLOCK_BYTES / (8 * n)));
  const nn = n * n;
  const space = eigenSpace(nn + count * n, n, options.simd !== false);
  const m = space.m;
  m.set(a.subarray(0, nn));
  m.set(v.subarray(0, count * n), nn);
  for (let k0 = 0; k0 < count; k0 += block) {
    const k1 = min(count, k0 + block);
    for (let i = 2; i < n; i++) {
      if (h[i] === 0) continue;
      for (let k = k0; k < k1; k++) space.kernels.reflect(i * n, nn + k * n, i, h[i]);
    }
  }
  v.set(m.subarray(nn, nn + count * n));
}

/** Working-set size for {@link applyReflectors}' vector blocks (about half an L2 cache). */
const VECTOR_BLOCK_BYTES = 256 * 1024;
