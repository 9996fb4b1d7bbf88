/**
 * Weight initialization with the published variances, drawn from the session's seeded
 * generator (Box–Muller normals, see `core/rng.ts`). Biases start at zero (common practice).
 *
 * | scheme | distribution | variance |
 * | --- | --- | --- |
 * | lecun-normal / -uniform | N(0, s²) / U(−√3·s, √3·s) | s² = 1/fan_in (LeCun et al., "Efficient BackProp", 1998) |
 * | glorot-normal / -uniform | same forms | s² = 2/(fan_in + fan_out) (Glorot & Bengio, AISTATS 2010) |
 * | he-normal / -uniform | same forms | s² = 2/fan_in (He et al., ICCV 2015) |
 * | orthogonal | Q of a Gaussian matrix (Gram–Schmidt) | orthonormal rows or columns (Saxe et al., ICLR 2014) |
 *
 * Normals are untruncated. Every scheme's standard deviation (and the orthogonal matrix)
 * is multiplied by `gain`. Draw order: layer by layer, weight row-major.
 */
import type { InitScheme, NetworkModel } from '../setup';
import type { Rng } from '../rng';
import { networkBlocks } from './network';

/** Variance of one weight under a scheme (before `gain`), for fan-in/fan-out of the layer. */
export function initVariance(scheme: Exclude<InitScheme, 'orthogonal'>, fanIn: number, fanOut: number): number {
  switch (scheme) {
    case 'lecun-normal':
    case 'lecun-uniform':
      return 1 / fanIn;
    case 'glorot-normal':
    case 'glorot-uniform':
      return 2 / (fanIn + fanOut);
    case 'he-normal':
    case 'he-uniform':
      return 2 / fanIn;
    default: {
      const never: never = scheme;
      throw new Error(`unknown init scheme '${String(never)}'`);
    }
  }
}

/** Fills `out[0 .. rows·cols)` with a (rows × cols) matrix with orthonormal rows or columns. */
export function orthogonalMatrix(rows: number, cols: number, rng: Rng, out: Float64Array, offset = 0): void {
  // Orthonormalize the shorter dimension's vectors: draw k = min(rows, cols) Gaussian
  // vectors of length m = max(rows, cols) and apply modified Gram–Schmidt (twice, for
  // numerical orthogonality). Gram–Schmidt of a Gaussian matrix yields Haar-distributed Q.
  const k = Math.min(rows, cols);
  const m = Math.max(rows, cols);
  const q = new Float64Array(k * m);
  rng.fillNormal(q);
  for (let j = 0; j < k; j++) {
    for (let pass = 0; pass < 2; pass++) {
      for (let p = 0; p < j; p++) {
        let d = 0;
        for (let i = 0; i < m; i++) d += q[j * m + i] * q[p * m + i];
        for (let i = 0; i < m; i++) q[j * m + i] -= d * q[p * m + i];
      }
    }
    let s = 0;
    for (let i = 0; i < m; i++) s += q[j * m + i] * q[j * m + i];
    const inv = 1 / Math.sqrt(s);
    for (let i = 0; i < m; i++) q[j * m + i] *= inv;
  }
  for (let r = 0; r < rows; r++) {
    for (let c = 0; c < cols; c++) {
      // rows ≤ cols: row r is vector r; otherwise column c is vector c.
      out[offset + r * cols + c] = rows <= cols ? q[r * m + c] : q[c * m + r];
    }
  }
}

/**
 * Draws the initial flat parameter vector of a network, or copies `model.weights` when given.
 * @param model the network (scheme, gain, optional explicit weights)
 * @param rng the generator to draw from (the session passes its `init` fork)
 */
export function initNetwork(model: NetworkModel, rng: Rng): Float64Array {
  const blocks = networkBlocks(model.inputs, model.layers.map((l) => l.units));
  const last = blocks[blocks.length - 1];
  const w = new Float64Array(last.offset + last.size);
  model.layers.forEach((_, l) => {
    const wb = blocks[2 * l];
    const [fanOut, fanIn] = wb.shape;
    const given = model.weights?.[l];
    if (given) {
      for (let o = 0; o < fanOut; o++) for (let i = 0; i < fanIn; i++) w[wb.offset + o * fanIn + i] = given.weight[o][i];
      for (let o = 0; o < fanOut; o++) w[blocks[2 * l + 1].offset + o] = given.bias[o];
      return;
    }
    const scheme = model.init;
    if (scheme === 'orthogonal') {
      orthogonalMatrix(fanOut, fanIn, rng, w, wb.offset);
      for (let i = 0; i < wb.size; i++) w[wb.offset + i] *= model.gain;
      return;
    }
    const sd = model.gain * Math.sqrt(initVariance(scheme, fanIn, fanOut));
    const uniform = scheme.endsWith('-uniform');
    const bound = Math.sqrt(3) * sd;
    for (let i = 0; i < wb.size; i++) w[wb.offset + i] = uniform ? (2 * rng.uniform() - 1) * bound : sd * rng.normal();
  });
  return w;
}
