/**
 * An objective plus the recipe's coupled weight decay as a penalty: f(w) + ½·λ‖w‖² over every
 * parameter (biases included, as torch's `weight_decay` applies to every parameter it is given),
 * or over the entries a decay mask selects (`decayBiases: false`).
 * Batch families (L-BFGS, CG, Newton) minimize this function, so their line searches and
 * curvature see the same gradient the first-order families get from g + λw.
 */
import type { Objective, ParamBlock, Rows } from '../objective';

/** f(w) + ½λ‖m ⊙ w‖² (m the mask, all ones when null); returns `objective` itself when λ = 0. */
export function withWeightDecay(objective: Objective, lambda: number, mask: Uint8Array | null = null): Objective {
  if (lambda === 0) return objective;
  return new DecayedObjective(objective, lambda, mask);
}

/** ½λ‖m ⊙ w‖² (m all ones when null). */
export function decayPenalty(w: Float64Array, lambda: number, mask: Uint8Array | null): number {
  let s = 0;
  for (let i = 0; i < w.length; i++) if (mask === null || mask[i] === 1) s += w[i] * w[i];
  return 0.5 * lambda * s;
}

class DecayedObjective implements Objective {
  readonly parameterCount: number;
  readonly blocks: readonly ParamBlock[];
  readonly rowCount: number;

  constructor(private readonly inner: Objective, private readonly lambda: number, private readonly mask: Uint8Array | null) {
    this.parameterCount = inner.parameterCount;
    this.blocks = inner.blocks;
    this.rowCount = inner.rowCount;
  }

  private penalty(w: Float64Array): number {
    return decayPenalty(w, this.lambda, this.mask);
  }

  private addTo(out: Float64Array, v: Float64Array): void {
    const m = this.mask;
    for (let i = 0; i < v.length; i++) if (m === null || m[i] === 1) out[i] += this.lambda * v[i];
  }

  value(w: Float64Array, rows?: Rows): number {
    return this.inner.value(w, rows) + this.penalty(w);
  }

  gradient(w: Float64Array, out: Float64Array, rows?: Rows): number {
    const f = this.inner.gradient(w, out, rows);
    this.addTo(out, w);
    return f + this.penalty(w);
  }

  get fusedProducts(): boolean {
    return this.inner.fusedProducts === true;
  }

  hvp(w: Float64Array, v: Float64Array, out: Float64Array, rows?: Rows, fused = false): void {
    this.inner.hvp(w, v, out, rows, fused);
    this.addTo(out, v);
  }

  gnvp(w: Float64Array, v: Float64Array, out: Float64Array, rows?: Rows, fused = false): void {
    this.inner.gnvp(w, v, out, rows, fused);
    this.addTo(out, v);
  }

  get blockSize(): number {
    return this.inner.curvatureBlock === undefined ? 1 : (this.inner.blockSize ?? 1);
  }

  curvatureBlock(kind: 'hessian' | 'gauss-newton', w: Float64Array, vs: readonly Float64Array[], outs: readonly Float64Array[], rows?: Rows, fused = false): void {
    if (this.inner.curvatureBlock !== undefined) this.inner.curvatureBlock(kind, w, vs, outs, rows, fused);
    else vs.forEach((v, j) => (kind === 'hessian' ? this.inner.hvp(w, v, outs[j], rows, fused) : this.inner.gnvp(w, v, outs[j], rows, fused)));
    vs.forEach((v, j) => this.addTo(outs[j], v));
  }

  /** The inner objective's exact trace plus λ per decayed entry (λI on the masked entries). */
  exactTrace(w: Float64Array, kind: 'hessian' | 'gauss-newton', rows?: Rows, maxBackwardPasses?: number): number | null {
    const inner = this.inner.exactTrace?.(w, kind, rows, maxBackwardPasses) ?? null;
    if (inner === null) return null;
    let decayed = this.parameterCount;
    if (this.mask !== null) {
      decayed = 0;
      for (const m of this.mask) if (m === 1) decayed++;
    }
    return inner + this.lambda * decayed;
  }
}
