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
import type { DataSetup, LossName, NetworkModel } from '../setup';
import type { Objective, ParamBlock, Rows } from '../objective';
import { activation, type Activation } from './activations';
import { lossFunction, type Loss } from './losses';

interface LayerPlan {
  fanIn: number;
  units: number;
  act: Activation;
  wOff: number;
  bOff: number;
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
}

/** A dense feed-forward network with a loss over an in-memory data set. */
export class Network implements Objective {
  readonly parameterCount: number;
  readonly blocks: readonly ParamBlock[];
  readonly rowCount: number;
  readonly inputs: number;
  readonly outputs: number;
  private readonly plan: LayerPlan[];
  private readonly work: LayerWork[];
  private readonly loss: Loss;
  private readonly l2: number;
  private readonly x: Float64Array;
  private readonly y: Float64Array;
  private readonly yWidth: number;
  private readonly xBatch: Float64Array;
  private readonly yBatch: Float64Array;
  private xin: Float64Array;
  private yin: Float64Array;

  /**
   * @param model network shape and activations (initial weights are not used here)
   * @param data rows the objective averages over
   * @param loss loss name (conventions in `losses.ts`)
   * @param l2 coefficient λ of ½·λ·Σ‖W‖² over weight matrices (biases excluded)
   * @param options optional activation overrides
   */
  constructor(model: NetworkModel, data: DataSetup, loss: LossName, l2: number, options: NetworkOptions = {}) {
    if (data.inputs !== model.inputs) throw new Error(`data has ${data.inputs} input columns but model.inputs is ${model.inputs}`);
    this.blocks = networkBlocks(model.inputs, model.layers.map((l) => l.units));
    this.plan = model.layers.map((layer, l) => ({
      fanIn: this.blocks[2 * l].shape[1],
      units: layer.units,
      act: options.activationOf?.(l) ?? activation(layer.activation, layer.params),
      wOff: this.blocks[2 * l].offset,
      bOff: this.blocks[2 * l + 1].offset,
    }));
    const last = this.blocks[this.blocks.length - 1];
    this.parameterCount = last.offset + last.size;
    this.inputs = model.inputs;
    this.outputs = model.layers[model.layers.length - 1].units;
    this.loss = lossFunction(loss);
    this.l2 = l2;
    this.x = data.x;
    this.y = data.y;
    this.rowCount = data.rows;
    this.yWidth = this.loss.targetWidth(this.outputs);
    if (data.targets !== this.yWidth) throw new Error(`loss ${loss} needs ${this.yWidth} target column(s) per row, data has ${data.targets}`);
    const n = data.rows;
    this.work = this.plan.map((p) => {
      const m = n * p.units;
      return {
        a: new Float64Array(m), h: new Float64Array(m), d1: new Float64Array(m), d2: new Float64Array(m),
        da: new Float64Array(m), dh: new Float64Array(m), ra: new Float64Array(m), rh: new Float64Array(m),
        rda: new Float64Array(m), rdh: new Float64Array(m),
      };
    });
    this.xBatch = new Float64Array(n * this.inputs);
    this.yBatch = new Float64Array(n * this.yWidth);
    this.xin = this.x;
    this.yin = this.y;
  }

  value(w: Float64Array, rows?: Rows): number {
    const n = this.select(rows);
    this.forward(w, n, false);
    return this.loss.value(this.work[this.plan.length - 1].h, this.yin, n, this.outputs) + this.penalty(w);
  }

  gradient(w: Float64Array, out: Float64Array, rows?: Rows): number {
    const n = this.select(rows);
    this.forward(w, n, false);
    const top = this.work[this.plan.length - 1];
    const f = this.loss.gradient(top.h, this.yin, n, this.outputs, top.dh);
    out.fill(0);
    this.backward(w, n, out);
    return f + this.addPenaltyGradient(w, w, out);
  }

  hvp(w: Float64Array, v: Float64Array, out: Float64Array, rows?: Rows): void {
    const n = this.select(rows);
    const L = this.plan.length;
    this.forward(w, n, true);
    this.rForward(w, v, n);
    const top = this.work[L - 1];
    this.loss.gradient(top.h, this.yin, n, this.outputs, top.dh);
    this.loss.outputHvp(top.h, this.yin, n, this.outputs, top.rh, top.rdh);
    out.fill(0);
    for (let l = L - 1; l >= 0; l--) {
      const p = this.plan[l];
      const wk = this.work[l];
      const m = n * p.units;
      const { dh, rdh, d1, d2, ra, da, rda } = wk;
      for (let i = 0; i < m; i++) {
        da[i] = dh[i] * d1[i];
        rda[i] = rdh[i] * d1[i] + dh[i] * d2[i] * ra[i];
      }
      const inp = l === 0 ? this.xin : this.work[l - 1].h;
      accumulateOuter(out, p, rda, inp, n, true);
      if (l > 0) {
        const below = this.work[l - 1];
        accumulateOuter(out, p, da, below.rh, n, false);
        backprop(w, p, da, n, below.dh, false);
        backprop(v, p, da, n, below.rdh, false);
        backprop(w, p, rda, n, below.rdh, true);
      }
    }
    this.addPenaltyGradient(w, v, out);
  }

  gnvp(w: Float64Array, v: Float64Array, out: Float64Array, rows?: Rows): void {
    const n = this.select(rows);
    this.forward(w, n, false);
    this.rForward(w, v, n);
    const top = this.work[this.plan.length - 1];
    this.loss.outputHvp(top.h, this.yin, n, this.outputs, top.rh, top.dh);
    out.fill(0);
    this.backward(w, n, out);
    this.addPenaltyGradient(w, v, out);
  }

  /**
   * Runs the forward pass on `rows` and hands each layer's pre-activations and outputs
   * (views valid only during the call, `n × units` row-major) to `visit`.
   */
  inspectLayers(w: Float64Array, rows: Rows, visit: (layer: number, pre: Float64Array, post: Float64Array, n: number) => void): void {
    const n = this.select(rows);
    this.forward(w, n, false);
    this.plan.forEach((p, l) => visit(l, this.work[l].a.subarray(0, n * p.units), this.work[l].h.subarray(0, n * p.units), n));
  }

  /** Network outputs ŷ for the given rows (a fresh `n × outputs` array). */
  predict(w: Float64Array, rows?: Rows): Float64Array {
    const n = this.select(rows);
    this.forward(w, n, false);
    return this.work[this.plan.length - 1].h.slice(0, n * this.outputs);
  }

  /** Points `xin`/`yin` at the full data or gathers the selected rows; returns the row count. */
  private select(rows: Rows): number {
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
    for (let l = 0; l < this.plan.length; l++) {
      const p = this.plan[l];
      const wk = this.work[l];
      const inp = l === 0 ? this.xin : this.work[l - 1].h;
      dense(w, p, inp, n, wk.a, true, false);
      p.act.evaluate(wk.a, wk.h, wk.d1, withSecond ? wk.d2 : null, n * p.units);
    }
  }

  /** R{a_l} and R{h_l} for all layers along direction v (needs a forward pass first). */
  private rForward(w: Float64Array, v: Float64Array, n: number): void {
    for (let l = 0; l < this.plan.length; l++) {
      const p = this.plan[l];
      const wk = this.work[l];
      const inp = l === 0 ? this.xin : this.work[l - 1].h;
      dense(v, p, inp, n, wk.ra, true, false);
      if (l > 0) dense(w, p, this.work[l - 1].rh, n, wk.ra, false, true);
      const m = n * p.units;
      for (let i = 0; i < m; i++) wk.rh[i] = wk.d1[i] * wk.ra[i];
    }
  }

  /** Reverse pass from `work[L−1].dh`, accumulating ∂/∂w into `g`. */
  private backward(w: Float64Array, n: number, g: Float64Array): void {
    for (let l = this.plan.length - 1; l >= 0; l--) {
      const p = this.plan[l];
      const wk = this.work[l];
      const m = n * p.units;
      let da = wk.da;
      if (p.act.identity) da = wk.dh;
      else for (let i = 0; i < m; i++) da[i] = wk.dh[i] * wk.d1[i];
      accumulateOuter(g, p, da, l === 0 ? this.xin : this.work[l - 1].h, n, true);
      if (l > 0) backprop(w, p, da, n, this.work[l - 1].dh, false);
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

/**
 * dst[r, o] (=|+=) Σ_i M[o, i]·inp[r, i] (+ bias[o]) with M the layer's weight block of `src`.
 * Blocked two rows × four outputs (register blocking); each sum still runs over i in
 * order, so the result does not depend on the blocking.
 */
function dense(src: Float64Array, p: LayerPlan, inp: Float64Array, n: number, dst: Float64Array, withBias: boolean, accumulate: boolean): void {
  const { fanIn, units, wOff, bOff } = p;
  const o4 = units - (units % 4);
  const n2 = n - (n % 2);
  let r = 0;
  // Two rows × four outputs: eight independent sums, each input and weight loaded once per block.
  for (; r < n2; r += 2) {
    const ia = r * fanIn, ib = ia + fanIn;
    const oa = r * units, ob = oa + units;
    let o = 0;
    for (; o < o4; o += 4) {
      const w0 = wOff + o * fanIn, w1 = w0 + fanIn, w2 = w1 + fanIn, w3 = w2 + fanIn;
      let a0 = 0, a1 = 0, a2 = 0, a3 = 0;
      if (withBias) { a0 = src[bOff + o]; a1 = src[bOff + o + 1]; a2 = src[bOff + o + 2]; a3 = src[bOff + o + 3]; }
      let b0 = a0, b1 = a1, b2 = a2, b3 = a3;
      for (let i = 0; i < fanIn; i++) {
        const x = inp[ia + i], y = inp[ib + i];
        const v0 = src[w0 + i], v1 = src[w1 + i], v2 = src[w2 + i], v3 = src[w3 + i];
        a0 += v0 * x; a1 += v1 * x; a2 += v2 * x; a3 += v3 * x;
        b0 += v0 * y; b1 += v1 * y; b2 += v2 * y; b3 += v3 * y;
      }
      if (accumulate) {
        dst[oa + o] += a0; dst[oa + o + 1] += a1; dst[oa + o + 2] += a2; dst[oa + o + 3] += a3;
        dst[ob + o] += b0; dst[ob + o + 1] += b1; dst[ob + o + 2] += b2; dst[ob + o + 3] += b3;
      } else {
        dst[oa + o] = a0; dst[oa + o + 1] = a1; dst[oa + o + 2] = a2; dst[oa + o + 3] = a3;
        dst[ob + o] = b0; dst[ob + o + 1] = b1; dst[ob + o + 2] = b2; dst[ob + o + 3] = b3;
      }
    }
    for (; o < units; o++) {
      const wr = wOff + o * fanIn;
      let a = withBias ? src[bOff + o] : 0;
      let b = a;
      for (let i = 0; i < fanIn; i++) { const v = src[wr + i]; a += v * inp[ia + i]; b += v * inp[ib + i]; }
      dst[oa + o] = accumulate ? dst[oa + o] + a : a;
      dst[ob + o] = accumulate ? dst[ob + o] + b : b;
    }
  }
  for (; r < n; r++) {
    const ir = r * fanIn;
    const orow = r * units;
    for (let o = 0; o < units; o++) {
      const wr = wOff + o * fanIn;
      let s = withBias ? src[bOff + o] : 0;
      for (let i = 0; i < fanIn; i++) s += src[wr + i] * inp[ir + i];
      dst[orow + o] = accumulate ? dst[orow + o] + s : s;
    }
  }
}

/**
 * g_W[o, i] += Σ_r d[r, o]·inp[r, i], and g_b[o] += Σ_r d[r, o] when `withBias`.
 * Blocked over four rows r so each gradient entry is loaded and stored once per block; the
 * four terms are added in r order.
 */
function accumulateOuter(g: Float64Array, p: LayerPlan, d: Float64Array, inp: Float64Array, n: number, withBias: boolean): void {
  const { fanIn, units, wOff, bOff } = p;
  const n4 = n - (n % 4);
  let r = 0;
  for (; r < n4; r += 4) {
    const i0 = r * fanIn, i1 = i0 + fanIn, i2 = i1 + fanIn, i3 = i2 + fanIn;
    const d0 = r * units, d1 = d0 + units, d2 = d1 + units, d3 = d2 + units;
    for (let o = 0; o < units; o++) {
      const c0 = d[d0 + o], c1 = d[d1 + o], c2 = d[d2 + o], c3 = d[d3 + o];
      if (c0 === 0 && c1 === 0 && c2 === 0 && c3 === 0) continue;
      if (withBias) g[bOff + o] = (((g[bOff + o] + c0) + c1) + c2) + c3;
      const wr = wOff + o * fanIn;
      for (let i = 0; i < fanIn; i++) {
        g[wr + i] = (((g[wr + i] + c0 * inp[i0 + i]) + c1 * inp[i1 + i]) + c2 * inp[i2 + i]) + c3 * inp[i3 + i];
      }
    }
  }
  for (; r < n; r++) {
    const ir = r * fanIn;
    const drow = r * units;
    for (let o = 0; o < units; o++) {
      const c = d[drow + o];
      if (c === 0) continue;
      if (withBias) g[bOff + o] += c;
      const wr = wOff + o * fanIn;
      for (let i = 0; i < fanIn; i++) g[wr + i] += c * inp[ir + i];
    }
  }
}

/**
 * dst[r, i] (=|+=) Σ_o M[o, i]·d[r, o] — the transpose product with `src`'s weight block.
 * Blocked over four outputs o, added in o order, so each dst entry is loaded once per block.
 */
function backprop(src: Float64Array, p: LayerPlan, d: Float64Array, n: number, dst: Float64Array, accumulate: boolean): void {
  const { fanIn, units, wOff } = p;
  if (!accumulate) dst.fill(0, 0, n * fanIn);
  const o4 = units - (units % 4);
  for (let r = 0; r < n; r++) {
    const ir = r * fanIn;
    const drow = r * units;
    let o = 0;
    for (; o < o4; o += 4) {
      const c0 = d[drow + o], c1 = d[drow + o + 1], c2 = d[drow + o + 2], c3 = d[drow + o + 3];
      if (c0 === 0 && c1 === 0 && c2 === 0 && c3 === 0) continue;
      const w0 = wOff + o * fanIn, w1 = w0 + fanIn, w2 = w1 + fanIn, w3 = w2 + fanIn;
      for (let i = 0; i < fanIn; i++) {
        dst[ir + i] = (((dst[ir + i] + c0 * src[w0 + i]) + c1 * src[w1 + i]) + c2 * src[w2 + i]) + c3 * src[w3 + i];
      }
    }
    for (; o < units; o++) {
      const c = d[drow + o];
      if (c === 0) continue;
      const wr = wOff + o * fanIn;
      for (let i = 0; i < fanIn; i++) dst[ir + i] += c * src[wr + i];
    }
  }
}
