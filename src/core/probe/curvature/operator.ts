/**
 * The curvature operator of an objective at fixed weights and rows, as a matrix-free
 * product callback for the solvers in `core/linalg`: v ↦ H(w)·v (exact R-operator product) or
 * v ↦ G(w)·v (Gauss-Newton), optionally shifted and symmetrically scaled,
 *
 *   v ↦ D^{1/2} (M + s·I) D^{1/2} v,   M = H or G,
 *
 * where D is a positive diagonal (an optimizer's effective per-coordinate step, e.g. P^{-1} for a
 * diagonal preconditioner P) and s a shift (L2 weight decay added to the gradient).
 */
import type { Objective, Rows } from '../../objective';
import type { BlockOperator, LinearOperator } from '../../linalg/operator';

/** Which second-order matrix: the exact Hessian, or the Gauss-Newton matrix Jᵀ H_out J. */
export type CurvatureKind = 'hessian' | 'gauss-newton';

/** Options of {@link curvatureOperator}. */
export interface CurvatureOperatorOptions {
  /** Rows of the data set (default: all rows). */
  rows?: Rows;
  /** Hessian (default) or Gauss-Newton. */
  kind?: CurvatureKind;
  /** Positive diagonal D of the scaling D^{1/2}·M·D^{1/2} (default: none, D = I). */
  scaling?: Float64Array;
  /** Shift s of M + s·I (default 0). */
  shift?: number;
  /** Products with fused multiply-adds where the objective has them (readouts only; default false). */
  fused?: boolean;
}

/** A {@link LinearOperator} that also counts its products. */
export interface CountingOperator {
  readonly apply: LinearOperator;
  /** The same products for several vectors, in block passes where the objective has them (`Objective.curvatureBlock`). */
  readonly applyBlock: BlockOperator;
  /** Vectors per block pass (1: the objective multiplies one at a time). */
  readonly blockSize: number;
  /** Products computed so far. */
  readonly count: () => number;
}

/**
 * v ↦ D^{1/2}(M + sI)D^{1/2}·v with M the Hessian or Gauss-Newton matrix of `objective` at `w`
 * (products by `objective.hvp` / `objective.gnvp`: Pearlmutter 1994; Schraudolph 2002).
 * `w` is captured by reference: do not modify it while the operator is in use.
 */
export function curvatureOperator(objective: Objective, w: Float64Array, options: CurvatureOperatorOptions = {}): CountingOperator {
  const p = objective.parameterCount;
  if (w.length !== p) throw new RangeError(`weights have ${w.length} entries, the objective expects ${p}`);
  const { rows, scaling } = options;
  const kind = options.kind ?? 'hessian';
  const shift = options.shift ?? 0;
  const fused = options.fused === true;
  let root: Float64Array | null = null;
  if (scaling !== undefined) {
    if (scaling.length !== p) throw new RangeError(`scaling diagonal has ${scaling.length} entries, expected ${p}`);
    root = new Float64Array(p);
    for (let i = 0; i < p; i++) {
      if (!(scaling[i] > 0) || !Number.isFinite(scaling[i])) throw new RangeError(`scaling diagonal must be positive and finite, entry ${i} is ${scaling[i]}`);
      root[i] = Math.sqrt(scaling[i]);
    }
  }
  const scaled = new Float64Array(root === null ? 0 : p);
  let count = 0;
  /** x ← D^{1/2}·v (into `into`) or v itself without a scaling. */
  const scale = (v: Float64Array, into: Float64Array): Float64Array => {
    if (root === null) return v;
    for (let i = 0; i < p; i++) into[i] = root[i] * v[i];
    return into;
  };
  /** out ← D^{1/2}(out + s·x): the shift and the outer scaling. */
  const finish = (x: Float64Array, out: Float64Array): void => {
    if (shift !== 0) for (let i = 0; i < p; i++) out[i] += shift * x[i];
    if (root !== null) for (let i = 0; i < p; i++) out[i] *= root[i];
  };
  const apply: LinearOperator = (v, out) => {
    const x = scale(v, scaled);
    if (kind === 'hessian') objective.hvp(w, x, out, rows, fused);
    else objective.gnvp(w, x, out, rows, fused);
    count++;
    finish(x, out);
  };
  const blockSize = objective.curvatureBlock === undefined ? 1 : Math.max(1, objective.blockSize ?? 1);
  const scaledBlock: Float64Array[] = [];
  const applyBlock: BlockOperator = (vs, outs) => {
    if (vs.length === 1 || objective.curvatureBlock === undefined) {
      vs.forEach((v, j) => apply(v, outs[j]));
      return;
    }
    while (root !== null && scaledBlock.length < vs.length) scaledBlock.push(new Float64Array(p));
    const xs = vs.map((v, j) => scale(v, scaledBlock[j]));
    objective.curvatureBlock(kind, w, xs, outs, rows, fused);
    count += vs.length;
    xs.forEach((x, j) => finish(x, outs[j]));
  };
  return { apply, applyBlock, blockSize, count: () => count };
}
