/**
 * A dense network as an {@link Objective}: exact loss, gradient (reverse mode), exact
 * Hessian-vector product by Pearlmutter's R-operator (forward-over-reverse; Pearlmutter,
 * "Fast exact multiplication by the Hessian", Neural Computation 1994) and the
 * Gauss-Newton product Jᵀ·H_out·J·v (Schraudolph 2002), over one flat parameter vector.
 *
 * Layout (ARCHITECTURE.md): layer by layer, weight `[out, in]` row-major, then bias `[out]`.
 * Model: a_l = W_l h_{l−1} + b_l, h_l = σ_l(a_l), h_0 = x, output ŷ = h_L.
 *
 * R-operator, with direction v = (V_l, c_l) and R{·} the directional derivative along v:
 *   R{a_l} = V_l h_{l−1} + c_l + W_l R{h_{l−1}},   R{h_l} = σ′(a_l) ⊙ R{a_l}
 *   R{δh_L} = H_out R{ŷ}
 *   R{δa_l} = R{δh_l} ⊙ σ′(a_l) + δh_l ⊙ σ″(a_l) ⊙ R{a_l}
 *   (Hv)_{W_l} = R{δa_l} h_{l−1}ᵀ + δa_l R{h_{l−1}}ᵀ,  (Hv)_{b_l} = R{δa_l}
 *   R{δh_{l−1}} = V_lᵀ δa_l + W_lᵀ R{δa_l}
 *
 * Workspaces are allocated once for the largest batch (all rows); no evaluation allocates.
 * Matrices are stored batch-major (row = example), so every inner loop walks memory
 * contiguously: a weight row against an activation row.
 */
import type { DataSetup, LossExpression, LossName, NetworkModel } from '../setup';
import { expressionLoss } from './expression';
import type { Objective, ParamBlock, Rows } from '../objective';
import { activation, layerActivation, type Activation } from './activations';
import { lossFunction, type Loss } from './losses';
import { matrixKernels, type LayerShape, type MatrixKernels } from './kernels';

interface LayerPlan extends LayerShape {
  act: Activation;
  /** The built-in ReLU (not an override): the kernels' vectorized loop gives its bits. */
  relu: boolean;
}

/** Per-layer buffers, each `maxRows × units`. */
interface LayerWork {
  a: Float64Array;
  h: Float64Array;
  d1: Float64Array;
  d2: Float64Array;
  da: Float64Array;
  dh: Float64Array;
  ra: Float64Array;
  rh: Float64Array;
  rda: Float64Array;
  rdh: Float64Array;
}

const LAYER_BUFFERS = ['a', 'h', 'd1', 'd2', 'da', 'dh', 'ra', 'rh', 'rda', 'rdh'] as const;

/**
 * What the workspaces still hold from the last forward pass: `hessian` — a forward pass with
 * f″ and the first-order backward (δh, δa) of `hvp`; `forward` — only the forward pass with f′
 * (after `gnvp`, which overwrites δh). Anything else ran a forward pass since: `none`.
 */
type Kept = 'none' | 'forward' | 'hessian';

/** Builds the parameter layout of a dense network with the given widths. */
export function networkBlocks(inputs: number, units: readonly number[]): ParamBlock[] {
  const blocks: ParamBlock[] = [];
  let off = 0;
  let fanIn = inputs;
  units.forEach((u, l) => {
    blocks.push({ name: `layers[${l}].weight`, layer: l, kind: 'weight', offset: off, size: u * fanIn, shape: [u, fanIn] });
    off += u * fanIn;
    blocks.push({ name: `layers[${l}].bias`, layer: l, kind: 'bias', offset: off, size: u, shape: [u] });
    off += u;
    fanIn = u;
  });
  return blocks;
}

/** Options of {@link Network}. */
export interface NetworkOptions {
  /**
   * Replaces the activation of a layer (return undefined to keep the named one). Used to
   * audit user-defined pieces and, in tests, to inject a deliberately wrong derivative.
   */
  activationOf?: (layer: number) => Activation | undefined;
  /** The user's loss term when `loss` is `expression` (`Setup.lossExpression`). */
  lossExpression?: LossExpression;
  /**
   * Use the WebAssembly SIMD kernels where the engine has them (default true). Both paths give
   * the same bits; false forces the plain-JavaScript loops (tests, benchmarks).
   */
  simd?: boolean;
  /**
   * Skip the products of a curvature product's direction that are exactly zero (default true):
   * where the direction's block of a layer is zero, its terms of that layer, and below the
   * first layer whose block is not zero the whole R-forward pass. A unit vector (a dense
   * Hessian's column, the Newton step's) or a direction confined to one layer (per-layer
   * sharpness) then costs a third to a half fewer products. The results are the same numbers —
   * only the sign of an exact zero can differ; false runs every product (tests compare the two).
   */
  skipZeroBlocks?: boolean;
}

/** A dense feed-forward network with a loss over an in-memory data set. */
export class Network implements Objective {
  readonly parameterCount: number;
  readonly blocks: readonly ParamBlock[];
  readonly rowCount: number;
  readonly inputs: number;
  readonly outputs: number;
  /** Which matrix kernels evaluate this network: `simd` (WebAssembly) or `scalar` (plain JavaScript); same bits. */
  readonly kernelKind: 'simd' | 'scalar';
  private readonly plan: LayerPlan[];
  private readonly work: LayerWork[];
  private readonly loss: Loss;
  private readonly l2: number;
  private readonly k: MatrixKernels;
  /** The products with fused multiply-adds (readouts only), or null where the engine has none. */
  private readonly kFused: MatrixKernels | null;
  /** See {@link NetworkOptions.skipZeroBlocks}. */
  private readonly skipZero: boolean;
  /** Per layer, for the direction of the current curvature product: its block is all zero. */
  private readonly vZero: boolean[];
  /** Per layer, after `rForward`: R{h} of the layer is exactly zero (its products were skipped). */
  private readonly rZero: boolean[];
  private readonly x: Float64Array;
  private readonly y: Float64Array;
  private readonly yWidth: number;
  private readonly xBatch: Float64Array;
  private readonly yBatch: Float64Array;
  /** Weights, direction and product as the kernels read and write them (views of their memory for SIMD). */
  private readonly wk: Float64Array;
  private readonly vk: Float64Array;
  private readonly gk: Float64Array;
  private xin: Float64Array;
  private yin: Float64Array;
  /** The weights and rows of the last forward pass, and what of it the workspaces still hold. */
  private kept: Kept = 'none';
  private readonly keptW: Float64Array;
  private keptRows: Int32Array | null = null;
  private keptAll = false;

  /**
   * @param model network shape and activations (initial weights are not used here)
   * @param data rows the objective averages over
   * @param loss loss name (conventions in `losses.ts`)
   * @param l2 coefficient λ of ½·λ·Σ‖W‖² over weight matrices (biases excluded)
   * @param options optional activation overrides, `simd: false` for the plain-JavaScript kernels
   */
  constructor(model: NetworkModel, data: DataSetup, loss: LossName, l2: number, options: NetworkOptions = {}) {
    if (data.inputs !== model.inputs) throw new Error(`data has ${data.inputs} input columns but model.inputs is ${model.inputs}`);
    this.blocks = networkBlocks(model.inputs, model.layers.map((l) => l.units));
    const relu = activation('relu');
    this.plan = model.layers.map((layer, l) => {
      const act = options.activationOf?.(l) ?? layerActivation(layer);
      return { fanIn: this.blocks[2 * l].shape[1], units: layer.units, act, relu: act === relu, wOff: this.blocks[2 * l].offset, bOff: this.blocks[2 * l + 1].offset };
    });
    const last = this.blocks[this.blocks.length - 1];
    const P = last.offset + last.size;
    this.parameterCount = P;
    this.inputs = model.inputs;
    this.outputs = model.layers[model.layers.length - 1].units;
    if (loss === 'expression' && !options.lossExpression) throw new Error('loss expression needs its expression (Setup.lossExpression)');
    this.loss = loss === 'expression' && options.lossExpression ? expressionLoss(options.lossExpression) : lossFunction(loss);
    this.l2 = l2;
    this.rowCount = data.rows;
    this.yWidth = this.loss.targetWidth(this.outputs);
    if (data.targets !== this.yWidth) throw new Error(`loss ${loss} needs ${this.yWidth} target column(s) per row, data has ${data.targets}`);
    const n = data.rows;
    // One allocation for every array the kernels touch: the data, a batch, P-vectors, workspaces.
    const lengths = [n * this.inputs, n * this.inputs, P, P, P, ...this.plan.flatMap((p) => LAYER_BUFFERS.map(() => n * p.units))];
    const widest = Math.max(this.inputs, ...this.plan.map((p) => p.units));
    const space = matrixKernels(lengths, widest, options.simd !== false);
    this.k = space.kernels;
    this.kFused = space.fused;
    this.skipZero = options.skipZeroBlocks !== false;
    this.vZero = this.plan.map(() => false);
    this.rZero = this.plan.map(() => false);
    this.kernelKind = space.kernels.kind;
    const [x, xBatch, wk, vk, gk, ...layerArrays] = space.arrays;
    x.set(data.x.subarray(0, n * this.inputs));
    this.x = x;
    this.xBatch = xBatch;
    this.wk = wk;
    this.vk = vk;
    this.gk = gk;
    this.work = this.plan.map((_, l) => {
      const own = layerArrays.slice(l * LAYER_BUFFERS.length, (l + 1) * LAYER_BUFFERS.length);
      const [a, h, d1, d2, da, dh, ra, rh, rda, rdh] = own;
      return { a, h, d1, d2, da, dh, ra, rh, rda, rdh };
    });
    this.y = data.y;
    this.yBatch = new Float64Array(n * this.yWidth);
    this.keptW = new Float64Array(P);
    this.xin = this.x;
    this.yin = this.y;
  }

  value(w: Float64Array, rows?: Rows): number {
    const n = this.select(rows);
    this.forward(this.weights(w), n, false);
    return this.loss.value(this.work[this.plan.length - 1].h, this.yin, n, this.outputs) + this.penalty(w);
  }

  gradient(w: Float64Array, out: Float64Array, rows?: Rows): number {
    const n = this.select(rows);
    const wk = this.weights(w);
    this.forward(wk, n, false);
    const top = this.work[this.plan.length - 1];
    const f = this.loss.gradient(top.h, this.yin, n, this.outputs, top.dh);
    const g = this.product(out);
    g.fill(0);
    this.backward(wk, n, g);
    if (g !== out) out.set(g);
    return f + this.addPenaltyGradient(w, w, out);
  }

  /** True when `hvp` and `gnvp` can fuse multiply-adds (the engine has WebAssembly relaxed SIMD). */
  get fusedProducts(): boolean {
    return this.kFused !== null;
  }

  /**
   * Exact H·v by the R-operator. At the weights and rows of the previous `hvp` (with no other
   * evaluation in between) the forward pass and the first-order backward are kept, so a run
   * of products at fixed weights (Lanczos, a dense Hessian) pays for them once. With `fused`
   * the R-passes fuse multiply-adds where the engine can (readouts only); the kept passes never
   * do, so a trajectory that reuses them gets the same bits either way.
   */
  hvp(w: Float64Array, v: Float64Array, out: Float64Array, rows?: Rows, fused = false): void {
    const L = this.plan.length;
    const keep = this.kept === 'hessian' && this.sameInputs(w, rows);
    const n = keep ? this.keptCount(rows) : this.select(rows);
    const wk = this.weights(w);
    if (!keep) {
      this.forward(wk, n, true);
      const top = this.work[L - 1];
      this.loss.gradient(top.h, this.yin, n, this.outputs, top.dh);
      for (let l = L - 1; l >= 0; l--) {
        const p = this.plan[l];
        const { dh, d1, da } = this.work[l];
        this.k.hadamard(dh, d1, n * p.units, da);
        if (l > 0) this.k.backprop(wk, p, da, n, this.work[l - 1].dh, false);
      }
      this.keep('hessian', w, rows);
    }
    const vk = this.direction(v);
    const k = this.rKernels(fused);
    const vz = this.zeroBlocks(vk);
    this.rForward(wk, vk, n, k);
    const top = this.work[L - 1];
    this.loss.outputHvp(top.h, this.yin, n, this.outputs, top.rh, top.rdh);
    const g = this.product(out);
    g.fill(0);
    for (let l = L - 1; l >= 0; l--) {
      const p = this.plan[l];
      const { dh, rdh, d1, d2, ra, da, rda } = this.work[l];
      k.rDelta(rdh, d1, dh, d2, ra, n * p.units, rda);
      const inp = l === 0 ? this.xin : this.work[l - 1].h;
      k.outer(g, p, rda, inp, n, true);
      if (l > 0) {
        const below = this.work[l - 1];
        // Terms that are exactly zero (see NetworkOptions.skipZeroBlocks) are not added.
        if (!this.rZero[l - 1]) k.outer(g, p, da, below.rh, n, false);
        if (!vz[l]) k.backprop(vk, p, da, n, below.rdh, false);
        k.backprop(wk, p, rda, n, below.rdh, !vz[l]);
      }
    }
    if (g !== out) out.set(g);
    this.addPenaltyGradient(w, v, out);
  }

  /** G·v; `fused` as for {@link hvp}. */
  gnvp(w: Float64Array, v: Float64Array, out: Float64Array, rows?: Rows, fused = false): void {
    const keep = this.kept !== 'none' && this.sameInputs(w, rows);
    const n = keep ? this.keptCount(rows) : this.select(rows);
    const wk = this.weights(w);
    if (!keep) this.forward(wk, n, false);
    // The reverse pass below overwrites δh: only the forward pass stays usable.
    this.keep('forward', w, rows);
    const k = this.rKernels(fused);
    const vk = this.direction(v);
    this.zeroBlocks(vk);
    this.rForward(wk, vk, n, k);
    const top = this.work[this.plan.length - 1];
    this.loss.outputHvp(top.h, this.yin, n, this.outputs, top.rh, top.dh);
    const g = this.product(out);
    g.fill(0);
    this.backward(wk, n, g, k);
    if (g !== out) out.set(g);
    this.addPenaltyGradient(w, v, out);
  }

  /**
   * The exact trace of the curvature matrix on `rows` (default all), or null where it is not
   * exact for `kind`: the Gauss–Newton matrix G = Σ_n J_nᵀ H_n J_n of any network, and the Hessian
   * of a network whose every activation is piecewise linear (ReLU, leaky ReLU, linear). Such a
   * network is piecewise linear in each single weight (a weight enters one affine map, and what
   * follows is piecewise linear), so ∂²ŷ/∂θ_i² = 0 where the R-operator evaluates it: the second-
   * order term of the Hessian has a zero diagonal, and the Hessian's diagonal is the Gauss–Newton one.
   *
   * tr G = Σ_n Σ_c ⟨J_nᵀ e_c, J_nᵀ H_n e_c⟩, and one row's parameter gradient of a layer is the
   * outer product δ_n ⊗ (h_n, 1) of its back-propagated signal and its input with the bias' 1, so
   * ⟨J_nᵀ u, J_nᵀ r⟩ = Σ_l (δ_l(u)_n · δ_l(r)_n)(‖h_{l−1,n}‖² + 1): two backward passes per output
   * (seeds e_c and H_n e_c), no outer products, no operator products. The l2 term adds l2 per weight
   * entry. Null too when those 2·outputs passes exceed `maxBackwardPasses`. Clears the kept pass.
   */
  exactTrace(w: Float64Array, kind: 'hessian' | 'gauss-newton', rows?: Rows, maxBackwardPasses = Infinity): number | null {
    if (kind === 'hessian' && !this.plan.every((p) => p.act.piecewiseLinear)) return null;
    if (2 * this.outputs > maxBackwardPasses) return null;
    const n = this.select(rows);
    const wk = this.weights(w);
    this.forward(wk, n, false);
    const L = this.plan.length;
    const C = this.outputs;
    const top = this.work[L - 1];
    // ‖input row‖² + 1 (the bias) per layer and row.
    const inputNorms = this.plan.map((p, l) => {
      const inp = l === 0 ? this.xin : this.work[l - 1].h;
      const width = p.fanIn;
      const out = new Float64Array(n);
      for (let r = 0; r < n; r++) {
        let s = 1;
        for (let j = r * width; j < (r + 1) * width; j++) s += inp[j] * inp[j];
        out[r] = s;
      }
      return out;
    });
    let trace = 0;
    for (let c = 0; c < C; c++) {
      const seed = top.dh;
      seed.fill(0, 0, n * C);
      for (let r = 0; r < n; r++) seed[r * C + c] = 1;
      this.loss.outputHvp(top.h, this.yin, n, C, seed, top.rdh);
      for (let l = L - 1; l >= 0; l--) {
        const p = this.plan[l];
        const wl = this.work[l];
        const m = n * p.units;
        let u = wl.da;
        let v = wl.rda;
        if (p.act.identity) {
          u = wl.dh;
          v = wl.rdh;
        } else {
          this.k.hadamard(wl.dh, wl.d1, m, u);
          this.k.hadamard(wl.rdh, wl.d1, m, v);
        }
        const norms = inputNorms[l];
        for (let r = 0; r < n; r++) {
          let s = 0;
          for (let i = r * p.units; i < (r + 1) * p.units; i++) s += u[i] * v[i];
          trace += s * norms[r];
        }
        if (l > 0) {
          const below = this.work[l - 1];
          this.k.backprop(wk, p, u, n, below.dh, false);
          this.k.backprop(wk, p, v, n, below.rdh, false);
        }
      }
    }
    if (this.l2 !== 0) for (const p of this.plan) trace += this.l2 * p.units * p.fanIn;
    return trace;
  }

  /**
   * Drops the kept forward pass, so the next Hessian or Gauss-Newton product starts afresh
   * (what a product from scratch costs: benchmarks time it this way).
   */
  forgetPass(): void {
    this.kept = 'none';
  }

  /**
   * Runs the forward pass on `rows` and hands each layer's pre-activations and outputs
   * (views valid only during the call, `n × units` row-major) to `visit`.
   */
  inspectLayers(w: Float64Array, rows: Rows, visit: (layer: number, pre: Float64Array, post: Float64Array, n: number) => void): void {
    const n = this.select(rows);
    this.forward(this.weights(w), n, false);
    this.plan.forEach((p, l) => visit(l, this.work[l].a.subarray(0, n * p.units), this.work[l].h.subarray(0, n * p.units), n));
  }

  /** Network outputs ŷ for the given rows (a fresh `n × outputs` array). */
  predict(w: Float64Array, rows?: Rows): Float64Array {
    const n = this.select(rows);
    this.forward(this.weights(w), n, false);
    return this.work[this.plan.length - 1].h.slice(0, n * this.outputs);
  }

  /** `w` where the kernels can read it: a copy in their memory for the SIMD kernels. */
  private weights(w: Float64Array): Float64Array {
    if (this.kernelKind === 'scalar') return w;
    this.wk.set(w);
    return this.wk;
  }

  private direction(v: Float64Array): Float64Array {
    if (this.kernelKind === 'scalar') return v;
    this.vk.set(v);
    return this.vk;
  }

  /** Where the kernels accumulate a P-vector result before it is copied to `out`. */
  private product(out: Float64Array): Float64Array {
    return this.kernelKind === 'scalar' ? out : this.gk;
  }

  /** Records that the workspaces hold `what` for weights `w` on `rows`. */
  private keep(what: Kept, w: Float64Array, rows: Rows): void {
    if (this.kept === what && what !== 'none') return;
    this.kept = what;
    this.keptW.set(w);
    this.keptAll = rows === undefined;
    this.keptRows = rows === undefined ? null : Int32Array.from(rows);
  }

  /** True when `w` and `rows` are those of the kept pass: equal bits (±0 told apart), equal row lists. */
  private sameInputs(w: Float64Array, rows: Rows): boolean {
    if (rows === undefined ? !this.keptAll : this.keptRows === null || this.keptRows.length !== rows.length) return false;
    if (rows !== undefined && this.keptRows !== null) {
      for (let i = 0; i < rows.length; i++) if (rows[i] !== this.keptRows[i]) return false;
    }
    const k = this.keptW;
    for (let i = 0; i < w.length; i++) {
      const a = w[i];
      const b = k[i];
      if (a !== b || (a === 0 && 1 / a !== 1 / b)) return false;
    }
    return true;
  }

  private keptCount(rows: Rows): number {
    return rows === undefined ? this.rowCount : rows.length;
  }

  /** Points `xin`/`yin` at the full data or gathers the selected rows; returns the row count. */
  private select(rows: Rows): number {
    // Gathering rows overwrites the batch buffer a kept pass may read, even when it then throws.
    this.kept = 'none';
    if (rows === undefined) {
      this.xin = this.x;
      this.yin = this.y;
      return this.rowCount;
    }
    const n = rows.length;
    if (n === 0 || n > this.rowCount) throw new RangeError(`a batch needs 1..${this.rowCount} rows, got ${n}`);
    const d = this.inputs;
    const k = this.yWidth;
    for (let r = 0; r < n; r++) {
      const src = rows[r];
      if (src < 0 || src >= this.rowCount) throw new RangeError(`row index ${src} outside 0..${this.rowCount - 1}`);
      for (let i = 0; i < d; i++) this.xBatch[r * d + i] = this.x[src * d + i];
      for (let j = 0; j < k; j++) this.yBatch[r * k + j] = this.y[src * k + j];
    }
    this.xin = this.xBatch;
    this.yin = this.yBatch;
    return n;
  }

  private forward(w: Float64Array, n: number, withSecond: boolean): void {
    this.kept = 'none';
    for (let l = 0; l < this.plan.length; l++) {
      const p = this.plan[l];
      const wk = this.work[l];
      const inp = l === 0 ? this.xin : this.work[l - 1].h;
      this.k.dense(w, p, inp, n, wk.a, true, false);
      const m = n * p.units;
      if (p.relu) {
        this.k.relu(wk.a, wk.h, wk.d1, m);
        if (withSecond) wk.d2.fill(0, 0, m);
      } else p.act.evaluate(wk.a, wk.h, wk.d1, withSecond ? wk.d2 : null, m);
    }
  }

  /** The kernels of a curvature product's R-passes: the fused ones when asked for and present. */
  private rKernels(fused: boolean): MatrixKernels {
    return fused && this.kFused !== null ? this.kFused : this.k;
  }

  /**
   * R{a} and R{h} of every layer for direction `v` (needs a forward pass first, and
   * {@link zeroBlocks} of `v`). Below the
   * first layer whose block of `v` is not zero both are zero (filled, not multiplied; `rZero`
   * says so); a layer whose block is zero takes only the term of the layer below.
   */
  private rForward(w: Float64Array, v: Float64Array, n: number, k: MatrixKernels): void {
    let below = false; // R{h} of the layer below may be nonzero (the inputs have none)
    for (let l = 0; l < this.plan.length; l++) {
      const p = this.plan[l];
      const wk = this.work[l];
      const own = !this.vZero[l];
      this.rZero[l] = !own && !below;
      if (this.rZero[l]) {
        wk.ra.fill(0, 0, n * p.units);
        wk.rh.fill(0, 0, n * p.units);
        continue;
      }
      const inp = l === 0 ? this.xin : this.work[l - 1].h;
      if (own) k.dense(v, p, inp, n, wk.ra, true, false);
      if (below) k.dense(w, p, this.work[l - 1].rh, n, wk.ra, false, own);
      k.hadamard(wk.d1, wk.ra, n * p.units, wk.rh);
      below = true;
    }
  }

  /** Marks the layers whose block (weights and bias) of `v` is all zero; none when skipping is off. */
  private zeroBlocks(v: Float64Array): readonly boolean[] {
    for (let l = 0; l < this.plan.length; l++) {
      const p = this.plan[l];
      let zero = this.skipZero;
      for (let i = p.wOff, end = p.wOff + p.units * p.fanIn; zero && i < end; i++) if (v[i] !== 0) zero = false;
      for (let i = p.bOff, end = p.bOff + p.units; zero && i < end; i++) if (v[i] !== 0) zero = false;
      this.vZero[l] = zero;
    }
    return this.vZero;
  }

  /** Reverse pass from `work[L−1].dh`, accumulating ∂/∂w into `g`. */
  private backward(w: Float64Array, n: number, g: Float64Array, k = this.k): void {
    for (let l = this.plan.length - 1; l >= 0; l--) {
      const p = this.plan[l];
      const wk = this.work[l];
      let da = wk.da;
      if (p.act.identity) da = wk.dh;
      else k.hadamard(wk.dh, wk.d1, n * p.units, da);
      k.outer(g, p, da, l === 0 ? this.xin : this.work[l - 1].h, n, true);
      if (l > 0) k.backprop(w, p, da, n, this.work[l - 1].dh, false);
    }
  }

  private penalty(w: Float64Array): number {
    if (this.l2 === 0) return 0;
    let s = 0;
    for (const p of this.plan) {
      const end = p.wOff + p.units * p.fanIn;
      for (let i = p.wOff; i < end; i++) s += w[i] * w[i];
    }
    return 0.5 * this.l2 * s;
  }

  /** Adds λ·u over weight entries to `out`; returns the penalty at `w` when u = w. */
  private addPenaltyGradient(w: Float64Array, u: Float64Array, out: Float64Array): number {
    if (this.l2 === 0) return 0;
    for (const p of this.plan) {
      const end = p.wOff + p.units * p.fanIn;
      for (let i = p.wOff; i < end; i++) out[i] += this.l2 * u[i];
    }
    return u === w ? this.penalty(w) : 0;
  }
}
