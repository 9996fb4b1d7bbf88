/**
 * Eigenvalues of a symmetric tridiagonal matrix by the root-free QL iteration of Pal, Walker and
 * Kahan: it works on the squared off-diagonal entries, so an inner step costs one division and
 * no square root (the QL with Givens rotations of `tridiagonal.ts` takes three divisions and a
 * root). LAPACK's dsterf (QL branch) is the reference formulation; Parlett, *The Symmetric
 * Eigenvalue Problem*, §8.15, derives it.
 */
import type { Tridiagonal } from './householder';

const { abs, sqrt } = Math;
const EPS = Number.EPSILON / 2;
const EPS2 = EPS * EPS;
/** Squares of entries beyond this range could overflow or vanish: such matrices take the rotation QL instead. */
const SAFE_MAX = 1e150;
const SAFE_MIN = 1e-150;
/** Iterations allowed per eigenvalue before giving up (LAPACK's MAXIT). */
const MAX_ITERATIONS = 30;

/**
 * All eigenvalues of T, ascending, or null when T's entries are too large or too small to square
 * safely, or the iteration did not converge (callers then use the rotation QL).
 * @param t - the tridiagonal matrix (not modified).
 */
export function rootFreeEigenvalues(t: Tridiagonal): Float64Array | null {
  const n = t.diagonal.length;
  const d = Float64Array.from(t.diagonal);
  // Internal layout: e[i] couples i and i+1, and holds its square once a block is entered.
  const e = new Float64Array(n);
  let largest = 0;
  for (let i = 0; i < n; i++) largest = Math.max(largest, abs(d[i]), i + 1 < n ? abs(t.subdiagonal[i + 1]) : 0);
  if (!(largest < SAFE_MAX)) return null;
  for (let i = 0; i + 1 < n; i++) {
    const v = t.subdiagonal[i + 1];
    if (v !== 0 && abs(v) < SAFE_MIN) return null;
    e[i] = v;
  }
  let budget = MAX_ITERATIONS * n;
  let l1 = 0;
  while (l1 < n) {
    if (l1 > 0) e[l1 - 1] = 0;
    // An unreduced block l1..m (negligible couplings split the matrix, as dsterf's test).
    let m = l1;
    for (; m < n - 1; m++) {
      if (abs(e[m]) <= sqrt(abs(d[m])) * sqrt(abs(d[m + 1])) * EPS) {
        e[m] = 0;
        break;
      }
    }
    const lend = m;
    let l = l1;
    l1 = m + 1;
    if (lend === l) continue;
    for (let i = l; i < lend; i++) e[i] *= e[i];
    while (l <= lend) {
      let mm = l;
      for (; mm < lend; mm++) if (abs(e[mm]) <= EPS2 * abs(d[mm] * d[mm + 1])) break;
      if (mm < lend) e[mm] = 0;
      let p = d[l];
      if (mm === l) {
        d[l] = p;
        l += 1;
        continue;
      }
      if (mm === l + 1) {
        const [rt1, rt2] = eigen2(d[l], sqrt(e[l]), d[l + 1]);
        d[l] = rt1;
        d[l + 1] = rt2;
        e[l] = 0;
        l += 2;
        continue;
      }
      if (budget-- <= 0) return null;
      // Wilkinson-type shift from the leading 2×2 block of the active part.
      const rte = sqrt(e[l]);
      let sigma = (d[l + 1] - p) / (2 * rte);
      const r0 = hypot1(sigma);
      sigma = p - rte / (sigma + (sigma >= 0 ? r0 : -r0));
      let c = 1;
      let s = 0;
      let gamma = d[mm] - sigma;
      p = gamma * gamma;
      for (let i = mm - 1; i >= l; i--) {
        const bb = e[i];
        const r = p + bb;
        if (i !== mm - 1) e[i + 1] = s * r;
        const oldc = c;
        c = p / r;
        s = bb / r;
        const oldgam = gamma;
        const alpha = d[i];
        gamma = c * (alpha - sigma) - s * oldgam;
        d[i + 1] = oldgam + (alpha - gamma);
        p = c !== 0 ? (gamma * gamma) / c : oldc * bb;
      }
      e[l] = s * p;
      d[l] = sigma + gamma;
    }
  }
  for (let i = 0; i < n; i++) if (!Number.isFinite(d[i])) return null;
  return d.sort();
}

/** √(x² + 1) without overflow. */
function hypot1(x: number): number {
  const a = abs(x);
  return a > 1 ? a * sqrt(1 + (1 / a) * (1 / a)) : sqrt(1 + a * a);
}

/** Eigenvalues (larger in absolute value first) of [[a, b], [b, c]], as LAPACK's dlae2. */
function eigen2(a: number, b: number, c: number): [number, number] {
  const sm = a + c;
  const adf = abs(a - c);
  const ab = abs(b + b);
  const [acmx, acmn] = abs(a) > abs(c) ? [a, c] : [c, a];
  const q = adf > ab ? ab / adf : adf < ab ? adf / ab : 1;
  const rt = (adf > ab ? adf : ab) * sqrt(1 + q * q);
  if (sm === 0) return [0.5 * rt, -0.5 * rt];
  const rt1 = sm < 0 ? 0.5 * (sm - rt) : 0.5 * (sm + rt);
  return [rt1, (acmx / rt1) * acmn - (b / rt1) * b];
}
