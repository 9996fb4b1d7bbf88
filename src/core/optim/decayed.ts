/**
 * An objective plus the recipe's coupled weight decay as a penalty: f(w) + ½·λ‖w‖² over every
 * parameter (biases included, as torch's `weight_decay` applies to every parameter it is given).
 * Batch families (L-BFGS, CG, Newton) minimize this function, so their line searches and
 * curvature see the same gradient the first-order families get from g + λw.
 */
import type { Objective, ParamBlock, Rows } from '../objective';

/** f(w) + ½λ‖w‖²; returns `objective` itself when λ = 0. */
export function withWeightDecay(objective: Objective, lambda: number): Objective {
  if (lambda === 0) return objective;
  return new DecayedObjective(objective, lambda);
}

class DecayedObjective implements Objective {
  readonly parameterCount: number;
  readonly blocks: readonly ParamBlock[];
  readonly rowCount: number;

  constructor(private readonly inner: Objective, private readonly lambda: number) {
    this.parameterCount = inner.parameterCount;
    this.blocks = inner.blocks;
    this.rowCount = inner.rowCount;
  }

  private penalty(w: Float64Array): number {
    let s = 0;
    for (let i = 0; i < w.length; i++) s += w[i] * w[i];
    return 0.5 * this.lambda * s;
  }

  value(w: Float64Array, rows?: Rows): number {
    return this.inner.value(w, rows) + this.penalty(w);
  }

  gradient(w: Float64Array, out: Float64Array, rows?: Rows): number {
    const f = this.inner.gradient(w, out, rows);
    for (let i = 0; i < w.length; i++) out[i] += this.lambda * w[i];
    return f + this.penalty(w);
  }

  hvp(w: Float64Array, v: Float64Array, out: Float64Array, rows?: Rows): void {
    this.inner.hvp(w, v, out, rows);
    for (let i = 0; i < v.length; i++) out[i] += this.lambda * v[i];
  }

  gnvp(w: Float64Array, v: Float64Array, out: Float64Array, rows?: Rows): void {
    this.inner.gnvp(w, v, out, rows);
    for (let i = 0; i < v.length; i++) out[i] += this.lambda * v[i];
  }
}
