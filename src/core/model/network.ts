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
  /**
   * The most directions {@link Network.curvatureBlock} multiplies in one pass (default
   * {@link defaultBlockSize}; 1 turns block passes off). Its workspaces are allocated with the
   * network's, since the kernels' memory grows only once.
   */
  blockSize?: number;
}

/** Workspace the block passes of one network may take by default (bytes). */
export const BLOCK_BYTES = 8 * 1024 * 1024;
/**
 * The widest layer for which block passes are on by default. Measured on the machine of
 * test/bench/BENCHMARKS.md (`npm run bench -- curvature`, and shapes with 784 inputs): products
 * 1.1–1.4× faster with layers of 8–32 units, where one direction's matrix products are too
 * narrow for the kernels' tiles; none from 48 units up (MLP b: 0.93–1.08×, the rearranging
 * costs what the wider products save).
 */
export const BLOCK_WIDEST = 32;
/**
 * Directions of a default block pass at most. Blocks of 2, 4 and 8 measured alike; 5 and 6
 * were slower than 4 on a 784-32-32-10 network, so the default is a power of two.
 */
export const DEFAULT_BLOCK = 8;
/** The most directions of one block pass. */
export const MAX_BLOCK = 16;

/**
 * Directions per block pass for a network over `rows` rows with these layers: 1 (no block
 * passes) when a layer is wider than {@link BLOCK_WIDEST}, else the largest power of two up to
 * {@link DEFAULT_BLOCK} whose buffers fit in {@link BLOCK_BYTES}.
 */
export function defaultBlockSize(rows: number, plan: readonly LayerShape[]): number {
  const widest = Math.max(...plan.map((p) => p.units));
  if (widest > BLOCK_WIDEST) return 1;
  const fits = Math.floor(BLOCK_BYTES / (8 * blockDoubles(rows, plan)));
  let k = 1;
  while (2 * k <= Math.min(DEFAULT_BLOCK, fits)) k *= 2;
  return k;
}

/** Block-pass buffers per layer, each `maxRows × block × units`, row r holding direction j's units at (r·block + j)·units. */
interface BlockWork {
  ra: Float64Array;
  rh: Float64Array;
  rda: Float64Array;
  rdh: Float64Array;
  /** f′, f″ and δh of the kept pass, each row repeated once per direction. */
  d1: Float64Array;
  d2: Float64Array;
  dh: Float64Array;
}

const BLOCK_BUFFERS = ['ra', 'rh', 'rda', 'rdh', 'd1', 'd2', 'dh'] as const;

/** Doubles a block pass needs per direction: the layers' buffers and four stacked copies of the largest layer block. */
function blockDoubles(rows: number, plan: readonly LayerShape[]): number {
  const widestBlock = Math.max(...plan.map((p) => p.units * (p.fanIn + 1)));
  return BLOCK_BUFFERS.length * rows * plan.reduce((s, p) => s + p.units, 0) + 4 * widestBlock;
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
  /** Directions per block pass (1: none). */
  readonly blockSize: number;
  /** Per layer, the block passes' buffers (empty when `blockSize` is 1). */
  private readonly blockWork: BlockWork[];
  /** A layer block of k directions stacked as one (k·units)×fanIn matrix and k·units biases. */
  private readonly stacked: Float64Array;
  /** A layer's weight block of k directions side by side: row o holds row o of each, units×(k·fanIn). */
  private readonly sideBySide: Float64Array;
  private readonly gStacked: Float64Array;
  private readonly gSideBySide: Float64Array;
  /** One direction's R{ŷ} and H_out·R{ŷ}, gathered for the loss. */
  private readonly outU: Float64Array;
  private readonly outR: Float64Array;
  /** Counts forward passes, so the block buffers know whose f′, f″ and δh they repeat. */
  private passes = 0;
  private repeated = { pass: -1, k: 0, second: false };

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
    const asked = options.blockSize;
    if (asked !== undefined && !(Number.isInteger(asked) && asked >= 1 && asked <= MAX_BLOCK)) {
      throw new RangeError(`blockSize must be an integer from 1 to ${MAX_BLOCK}, got ${asked}`);
    }
    const kb = asked ?? defaultBlockSize(n, this.plan);
    this.blockSize = kb;
    const widestBlock = Math.max(...this.plan.map((p) => p.units * (p.fanIn + 1)));
    if (kb > 1) lengths.push(...this.plan.flatMap((p) => BLOCK_BUFFERS.map(() => n * kb * p.units)), ...[0, 1, 2, 3].map(() => kb * widestBlock));
    // A block pass widens a product's units side (stacked blocks) or, above the first layer, its
    // fanIn side (side by side, fanIn = the units below): at most kb × the widest layer's units.
    const wider = kb * Math.max(...this.plan.map((p) => p.units));
    const space = matrixKernels(lengths, widest, options.simd !== false, kb > 1 ? wider : widest);
    this.k = space.kernels;
    this.kFused = space.fused;
    this.skipZero = options.skipZeroBlocks !== false;
    this.vZero = this.plan.map(() => false);
    this.rZero = this.plan.map(() => false);
    this.kernelKind = space.kernels.kind;
    const [x, xBatch, wk, vk, gk, ...rest] = space.arrays;
    const layerArrays = rest.slice(0, this.plan.length * LAYER_BUFFERS.length);
    const blockArrays = rest.slice(layerArrays.length);
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
    this.blockWork = kb === 1 ? [] : this.plan.map((_, l) => {
      const own = blockArrays.slice(l * BLOCK_BUFFERS.length, (l + 1) * BLOCK_BUFFERS.length);
      const [ra, rh, rda, rdh, d1, d2, dh] = own;
      return { ra, rh, rda, rdh, d1, d2, dh };
    });
    const stackArrays = blockArrays.slice(this.plan.length * BLOCK_BUFFERS.length);
    const none = new Float64Array(0);
    [this.stacked, this.sideBySide, this.gStacked, this.gSideBySide] = kb === 1 ? [none, none, none, none] : stackArrays;
    this.outU = new Float64Array(kb === 1 ? 0 : n * this.outputs);
    this.outR = new Float64Array(kb === 1 ? 0 : n * this.outputs);
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
    const wk = this.weights(w);
    const n = this.hessianPass(w, wk, rows);
    const vk = this.direction(v);
    const k = this.rKernels(fused);
    const vz = this.zeroBlocks([vk]);
    this.rForward(wk, [vk], n, k);
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

  /**
   * Curvature products with several directions in one pass (see {@link Objective.curvatureBlock}):
   * up to {@link blockSize} at a time, the directions' R-passes side by side, so that each product
   * with the weights is one matrix product over `block × rows` rows, and each product with the
   * directions' own blocks one product `block` times as wide. Every output's sum adds the same
   * terms in the same order as in {@link hvp} / {@link gnvp}, so the bits are theirs (with zero
   * blocks skipped only where every direction's block is zero: an exact zero's sign may differ).
   */
  curvatureBlock(kind: 'hessian' | 'gauss-newton', w: Float64Array, vs: readonly Float64Array[], outs: readonly Float64Array[], rows?: Rows, fused = false): void {
    if (vs.length !== outs.length) throw new RangeError(`a block of ${vs.length} directions needs as many outputs, got ${outs.length}`);
    const P = this.parameterCount;
    vs.forEach((v, j) => {
      if (v.length !== P || outs[j].length !== P) throw new RangeError(`direction ${j} of the block and its output need ${P} entries, got ${v.length} and ${outs[j].length}`);
    });
    for (let at = 0; at < vs.length; at += this.blockSize) {
      const k = Math.min(this.blockSize, vs.length - at);
      if (k === 1) {
        if (kind === 'hessian') this.hvp(w, vs[at], outs[at], rows, fused);
        else this.gnvp(w, vs[at], outs[at], rows, fused);
      } else this.blockPass(kind, w, vs.slice(at, at + k), outs.slice(at, at + k), rows, fused);
    }
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
    this.zeroBlocks([vk]);
    this.rForward(wk, [vk], n, k);
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

  /**
   * Runs the forward pass with f″ and the first-order backward (δh, δa) at `w` (`wk` its copy for
   * the kernels) on `rows`, unless the workspaces already hold them; returns the row count.
   */
  private hessianPass(w: Float64Array, wk: Float64Array, rows: Rows): number {
    if (this.kept === 'hessian' && this.sameInputs(w, rows)) return this.keptCount(rows);
    const L = this.plan.length;
    const n = this.select(rows);
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
    return n;
  }

  /** One block pass of 2..blockSize directions (see {@link curvatureBlock}). */
  private blockPass(kind: 'hessian' | 'gauss-newton', w: Float64Array, vs: readonly Float64Array[], outs: readonly Float64Array[], rows: Rows, fused: boolean): void {
    const L = this.plan.length;
    const k = vs.length;
    const hessian = kind === 'hessian';
    const wk = this.weights(w);
    let n: number;
    if (hessian) n = this.hessianPass(w, wk, rows);
    else if (this.kept !== 'none' && this.sameInputs(w, rows)) n = this.keptCount(rows);
    else {
      n = this.select(rows);
      this.forward(wk, n, false);
      this.keep('forward', w, rows);
    }
    this.repeatRows(n, k, hessian);
    const kern = this.rKernels(fused);
    this.zeroBlocks(vs);
    this.rForward(wk, vs, n, kern);
    // H_out per direction, on its rows gathered into one n × outputs matrix.
    const C = this.outputs;
    const top = this.blockWork[L - 1];
    for (let j = 0; j < k; j++) {
      for (let r = 0; r < n; r++) for (let c = 0; c < C; c++) this.outU[r * C + c] = top.rh[(r * k + j) * C + c];
      this.loss.outputHvp(this.work[L - 1].h, this.yin, n, C, this.outU, this.outR);
      for (let r = 0; r < n; r++) for (let c = 0; c < C; c++) top.rdh[(r * k + j) * C + c] = this.outR[r * C + c];
    }
    for (let l = L - 1; l >= 0; l--) {
      const p = this.plan[l];
      const bw = this.blockWork[l];
      const m = n * k * p.units;
      const inp = l === 0 ? this.xin : this.work[l - 1].h;
      // The block's R{δa} (Hessian) or δa of the Gauss-Newton pass, whose δh is in rdh.
      let d = bw.rda;
      if (hessian) kern.rDelta(bw.rdh, bw.d1, bw.dh, bw.d2, bw.ra, m, d);
      else if (p.act.identity) d = bw.rdh;
      else kern.hadamard(bw.rdh, bw.d1, m, d);
      const size = p.units * p.fanIn;
      const shape = this.stackedShape(p, k);
      this.gStacked.fill(0, 0, k * (size + p.units));
      kern.outer(this.gStacked, shape, d, inp, n, true);
      let side = false;
      if (l > 0) {
        const lower = this.blockWork[l - 1];
        if (hessian) {
          const da = this.work[l].da;
          const wide: LayerShape = { fanIn: k * p.fanIn, units: p.units, wOff: 0, bOff: 0 };
          if (!this.rZero[l - 1]) {
            for (let j = 0; j < k; j++) this.sideBySideOf(this.gStacked, j * size, p, j, k, this.gSideBySide);
            kern.outer(this.gSideBySide, wide, da, lower.rh, n, false);
            side = true;
          }
          if (!this.vZero[l]) {
            vs.forEach((v, j) => this.sideBySideOf(v, p.wOff, p, j, k, this.sideBySide));
            kern.backprop(this.sideBySide, wide, da, n, lower.rdh, false);
          }
          kern.backprop(wk, p, d, n * k, lower.rdh, !this.vZero[l]);
        } else kern.backprop(wk, p, d, n * k, lower.rdh, false);
      }
      for (let j = 0; j < k; j++) {
        const out = outs[j];
        if (side) {
          const g = this.gSideBySide;
          for (let o = 0; o < p.units; o++) {
            const from = (o * k + j) * p.fanIn;
            const to = p.wOff + o * p.fanIn;
            for (let i = 0; i < p.fanIn; i++) out[to + i] = g[from + i];
          }
        } else out.set(this.gStacked.subarray(j * size, (j + 1) * size), p.wOff);
        out.set(this.gStacked.subarray(k * size + j * p.units, k * size + (j + 1) * p.units), p.bOff);
      }
    }
    for (let j = 0; j < k; j++) this.addPenaltyGradient(w, vs[j], outs[j]);
  }

  /** True when the block (weights and bias) of layer `p` of `v` is all zero. */
  private blockIsZero(v: Float64Array, p: LayerPlan): boolean {
    for (let i = p.wOff, end = p.wOff + p.units * p.fanIn; i < end; i++) if (v[i] !== 0) return false;
    for (let i = p.bOff, end = p.bOff + p.units; i < end; i++) if (v[i] !== 0) return false;
    return true;
  }

  /** The shape of k directions' blocks of layer `p` stacked: (k·units)×fanIn weights, then k·units biases. */
  private stackedShape(p: LayerShape, k: number): LayerShape {
    return { fanIn: p.fanIn, units: k * p.units, wOff: 0, bOff: k * p.units * p.fanIn };
  }

  /** Writes the k directions' blocks of layer `p` into {@link stacked}; returns their shape. */
  private stack(vs: readonly Float64Array[], p: LayerShape): LayerShape {
    const k = vs.length;
    const size = p.units * p.fanIn;
    for (let j = 0; j < k; j++) {
      this.stacked.set(vs[j].subarray(p.wOff, p.wOff + size), j * size);
      this.stacked.set(vs[j].subarray(p.bOff, p.bOff + p.units), k * size + j * p.units);
    }
    return this.stackedShape(p, k);
  }

  /**
   * Copies direction j's units×fanIn block of layer `p` (at `from` in `src`) into `dst`, whose row
   * o holds row o of each of the k directions' blocks side by side.
   */
  private sideBySideOf(src: Float64Array, from: number, p: LayerShape, j: number, k: number, dst: Float64Array): void {
    const { units, fanIn } = p;
    for (let o = 0; o < units; o++) {
      const a = from + o * fanIn;
      const b = (o * k + j) * fanIn;
      for (let i = 0; i < fanIn; i++) dst[b + i] = src[a + i];
    }
  }

  /**
   * Repeats each row of the kept pass's f′ (and, for the Hessian, f″ and δh) once per direction
   * into the block buffers, unless they already hold this pass for `k` directions.
   */
  private repeatRows(n: number, k: number, second: boolean): void {
    const done = this.repeated;
    if (done.pass === this.passes && done.k === k && (done.second || !second)) return;
    for (let l = 0; l < this.plan.length; l++) {
      const u = this.plan[l].units;
      const wl = this.work[l];
      const bw = this.blockWork[l];
      const pairs: [Float64Array, Float64Array][] = second ? [[wl.d1, bw.d1], [wl.d2, bw.d2], [wl.dh, bw.dh]] : [[wl.d1, bw.d1]];
      for (const [src, dst] of pairs) {
        for (let r = 0; r < n; r++) {
          const row = src.subarray(r * u, (r + 1) * u);
          for (let j = 0; j < k; j++) dst.set(row, (r * k + j) * u);
        }
      }
    }
    this.repeated = { pass: this.passes, k, second };
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
    this.passes++;
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
   * R{a} and R{h} of every layer for the directions `vs` (needs a forward pass first, and
   * {@link zeroBlocks} of `vs`): for one direction in the layers' buffers, for several side by side
   * in the block buffers (see {@link curvatureBlock}). Below the first layer where a block of `vs`
   * is not zero both are zero (filled, not multiplied; `rZero` says so); a layer whose blocks are
   * zero takes only the term of the layer below.
   */
  private rForward(w: Float64Array, vs: readonly Float64Array[], n: number, kern: MatrixKernels): void {
    const k = vs.length;
    const bufs: ReadonlyArray<{ ra: Float64Array; rh: Float64Array; d1: Float64Array }> = k === 1 ? this.work : this.blockWork;
    let below = false; // R{h} of the layer below may be nonzero (the inputs have none)
    for (let l = 0; l < this.plan.length; l++) {
      const p = this.plan[l];
      const b = bufs[l];
      const m = n * k * p.units;
      const own = !this.vZero[l];
      this.rZero[l] = !own && !below;
      if (this.rZero[l]) {
        b.ra.fill(0, 0, m);
        b.rh.fill(0, 0, m);
        continue;
      }
      const inp = l === 0 ? this.xin : this.work[l - 1].h;
      if (own && k === 1) kern.dense(vs[0], p, inp, n, b.ra, true, false);
      else if (own) kern.dense(this.stacked, this.stack(vs, p), inp, n, b.ra, true, false);
      if (below) kern.dense(w, p, bufs[l - 1].rh, n * k, b.ra, false, own);
      kern.hadamard(b.d1, b.ra, m, b.rh);
      below = true;
    }
  }

  /** Marks the layers whose block (weights and bias) is all zero in every one of `vs`; none when skipping is off. */
  private zeroBlocks(vs: readonly Float64Array[]): readonly boolean[] {
    this.plan.forEach((p, l) => {
      this.vZero[l] = this.skipZero && vs.every((v) => this.blockIsZero(v, p));
    });
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
