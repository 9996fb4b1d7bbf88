/**
 * The one interface every optimizer, probe and readout works through: a scalar
 * objective of one flat parameter vector with exact first and second-order products.
 *
 * Networks (`core/model/network.ts`) and analytic test functions
 * (`core/model/analytic.ts`) both implement it.
 */

/** Which rows of the data set an evaluation uses; `undefined` means the full batch. */
export type Rows = Int32Array | undefined;

/** One named slice of the flat parameter vector. */
export interface ParamBlock {
  /** Human name, e.g. `layers[1].weight`, `layers[1].bias`, `x`. */
  readonly name: string;
  /** Index of the layer it belongs to (0-based), or -1 for non-network objectives. */
  readonly layer: number;
  /** `weight` and `bias` for network layers, `param` for analytic objectives. */
  readonly kind: 'weight' | 'bias' | 'param';
  /** Offset into the flat vector. */
  readonly offset: number;
  /** Number of entries (product of `shape`). */
  readonly size: number;
  /** `[out, in]` for weights (row-major), `[out]` for biases, `[P]` otherwise. */
  readonly shape: readonly number[];
}

/**
 * A twice-differentiable objective over a flat `Float64Array` of `parameterCount` entries.
 *
 * All methods are pure with respect to `w` and `v` (never modified); outputs are written
 * into caller-owned arrays so hot loops allocate nothing. Regularization, when the setup
 * has any, is included in every value, gradient and product.
 */
export interface Objective {
  /** Number of parameters P. */
  readonly parameterCount: number;
  /** Layout of the flat vector, in order, covering [0, P) without gaps. */
  readonly blocks: readonly ParamBlock[];
  /** Number of data rows (0 for analytic objectives, whose `rows` argument is ignored). */
  readonly rowCount: number;

  /** Loss at `w` on `rows` (default: all rows). */
  value(w: Float64Array, rows?: Rows): number;

  /** Writes ∇f(w) into `out` (length P) and returns f(w). */
  gradient(w: Float64Array, out: Float64Array, rows?: Rows): number;

  /**
   * Writes the exact Hessian-vector product H(w)·v into `out` (length P). With `fused`, the
   * product may fuse multiply-adds where the engine can ({@link fusedProducts}): faster, and
   * different in the last bits from engine to engine — readouts pass it, trajectories never do.
   */
  hvp(w: Float64Array, v: Float64Array, out: Float64Array, rows?: Rows, fused?: boolean): void;

  /**
   * Writes the Gauss-Newton product G(w)·v = Jᵀ·H_out·J·v (+ regularization) into `out`.
   * For analytic objectives without a natural split this is the Hessian product. `fused` as for `hvp`.
   */
  gnvp(w: Float64Array, v: Float64Array, out: Float64Array, rows?: Rows, fused?: boolean): void;

  /**
   * Curvature products with several directions in one pass: `outs[j]` = M(w)·`vs[j]` for M the
   * Hessian or the Gauss-Newton matrix, each the same numbers as `hvp` / `gnvp` give it alone
   * (the same bits, up to the sign of an exact zero where the directions' zero blocks differ).
   * The directions' products share each matrix product of the weights (absent: one at a time).
   */
  curvatureBlock?(kind: 'hessian' | 'gauss-newton', w: Float64Array, vs: readonly Float64Array[], outs: readonly Float64Array[], rows?: Rows, fused?: boolean): void;

  /** How many directions {@link curvatureBlock} takes in one pass (absent: 1). */
  readonly blockSize?: number;

  /** True when `fused` products really fuse (absent: they never do). */
  readonly fusedProducts?: boolean;

  /**
   * The exact trace of the Hessian or the Gauss-Newton matrix at `w` on `rows` (regularization
   * included), or null where this objective cannot give it without estimating, or not within
   * `maxBackwardPasses` backward passes of its model (absent: never).
   */
  exactTrace?(w: Float64Array, kind: 'hessian' | 'gauss-newton', rows?: Rows, maxBackwardPasses?: number): number | null;
}

/** Euclidean dot product of two equal-length vectors. */
export function dot(a: Float64Array, b: Float64Array): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += a[i] * b[i];
  return s;
}

/** Euclidean norm, scaled to avoid overflow for large entries. */
export function norm2(a: Float64Array, offset = 0, size = a.length - offset): number {
  let scale = 0;
  let ssq = 1;
  const end = offset + size;
  for (let i = offset; i < end; i++) {
    const x = a[i];
    if (x !== 0) {
      const ax = Math.abs(x);
      // One division per entry, named once: V8 does not merge the two equal quotients of
      // q·q written out twice, and the divider bounds this loop (three times slower so).
      if (scale < ax) {
        const q = scale / ax;
        ssq = 1 + ssq * q * q;
        scale = ax;
      } else {
        const q = ax / scale;
        ssq += q * q;
      }
    }
  }
  return scale * Math.sqrt(ssq);
}
