/**
 * Directions the landscape readouts look along: the top Hessian eigenvectors (Lanczos),
 * filter-normalized random directions (Li, Xu, Taylor, Studer & Goldstein, "Visualizing the Loss
 * Landscape of Neural Nets", NeurIPS 2018, §4), and the projection of a trajectory onto the plane
 * two directions span (least squares).
 */
import type { Objective, ParamBlock, Rows } from '../objective';
import { dot } from '../objective';
import type { Rng } from '../rng';
import { lanczosExtremes } from '../linalg/lanczos';
import { curvatureOperator } from './curvature/operator';

/** One eigenpair of the Hessian at the weights. */
export interface Eigendirection {
  value: number;
  /** Residual bound of the Ritz pair. */
  errorBound: number;
  /** Unit vector. */
  vector: Float64Array;
}

/**
 * The k largest eigenpairs of the Hessian at `w` by Lanczos with Ritz vectors (Golub & Van Loan,
 * Matrix Computations, 4th ed., §10.1). Each vector's sign is fixed so that its largest entry
 * in magnitude is positive, so a repeat gives the same picture.
 */
export function topEigendirections(objective: Objective, w: Float64Array, k: number, rng: Rng, rows?: Rows, maxIterations = 100): Eigendirection[] {
  const op = curvatureOperator(objective, w, { rows });
  const r = lanczosExtremes(op.apply, w.length, rng, { k, which: 'largest', vectors: true, tol: 1e-10, maxIterations });
  return r.largest.map((p) => {
    const v = Float64Array.from(p.vector as Float64Array);
    let big = 0;
    for (let i = 0; i < v.length; i++) if (Math.abs(v[i]) > Math.abs(v[big])) big = i;
    if (v[big] < 0) for (let i = 0; i < v.length; i++) v[i] = -v[i];
    return { value: p.value, errorBound: p.errorBound, vector: v };
  });
}

/**
 * A filter-normalized random direction (Li et al. 2018, §4): a standard-normal draw, then each
 * filter — for a dense layer a row of its weight matrix, the incoming weights of one unit — is
 * rescaled to the norm of the same row of `w`. Bias entries are set to zero, as the paper does
 * for biases. Blocks of other kinds (analytic objectives) are scaled as one filter.
 */
export function filterNormalizedDirection(blocks: readonly ParamBlock[], w: Float64Array, rng: Rng): Float64Array {
  const d = rng.fillNormal(new Float64Array(w.length));
  for (const b of blocks) {
    if (b.kind === 'bias') {
      d.fill(0, b.offset, b.offset + b.size);
      continue;
    }
    const rowLength = b.kind === 'weight' && b.shape.length === 2 ? b.shape[1] : b.size;
    for (let start = b.offset; start < b.offset + b.size; start += rowLength) {
      let dn = 0;
      let wn = 0;
      for (let i = start; i < start + rowLength; i++) { dn += d[i] * d[i]; wn += w[i] * w[i]; }
      const s = dn > 0 ? Math.sqrt(wn) / Math.sqrt(dn) : 0;
      for (let i = start; i < start + rowLength; i++) d[i] *= s;
    }
  }
  return d;
}

/**
 * Coordinates (α, β) of each point p of a trajectory in the plane w + α·d1 + β·d2, by least
 * squares: the 2×2 normal equations [d1·d1 d1·d2; d1·d2 d2·d2]·(α, β) = (d1·(p − w), d2·(p − w)).
 * Also the distance of each point from the plane, so a reader sees how much the picture leaves out.
 */
export function projectOntoPlane(w: Float64Array, d1: Float64Array, d2: Float64Array, points: readonly Float64Array[]): { alpha: number[]; beta: number[]; offPlane: number[] } {
  const a11 = dot(d1, d1);
  const a12 = dot(d1, d2);
  const a22 = dot(d2, d2);
  const det = a11 * a22 - a12 * a12;
  if (!(det > 0)) throw new RangeError('the two directions are parallel or zero: they span no plane');
  const r = new Float64Array(w.length);
  const alpha: number[] = [];
  const beta: number[] = [];
  const offPlane: number[] = [];
  for (const p of points) {
    for (let i = 0; i < w.length; i++) r[i] = p[i] - w[i];
    const b1 = dot(d1, r);
    const b2 = dot(d2, r);
    const a = (a22 * b1 - a12 * b2) / det;
    const b = (a11 * b2 - a12 * b1) / det;
    let s = 0;
    for (let i = 0; i < w.length; i++) { const e = r[i] - a * d1[i] - b * d2[i]; s += e * e; }
    alpha.push(a);
    beta.push(b);
    offPlane.push(Math.sqrt(s));
  }
  return { alpha, beta, offPlane };
}
