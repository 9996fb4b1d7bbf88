/**
 * Losses over a batch of network outputs, each with value, gradient and the output-space
 * Hessian-vector product H_out·u (which also gives the Gauss-Newton product Jᵀ H_out J v).
 *
 * Conventions (normative, so values compare with the major frameworks' mean reductions):
 * - `mse`: mean over all n·K elements of (ŷ − y)²  (PyTorch `MSELoss()`).
 * - `cross-entropy`: mean over n examples of −log softmax(ŷ)[class]  (`CrossEntropyLoss()`).
 * - `binary-cross-entropy`: mean over n·K elements of the logistic loss on logits,
 *   max(z, 0) − z·y + log1p(e^−|z|)  (`BCEWithLogitsLoss()`).
 *
 * Layout: `out` is n × K row-major; `y` is n × K for mse / binary-cross-entropy and n class
 * indices for cross-entropy.
 */
import type { LossName } from '../setup';
import * as elementary from '../elementary';

// Bound once: in CommonJS builds (jest, tsx) an imported binding is a getter reached on every call.
const { exp, log, log1p, sigmoid } = elementary;

/** A loss over a batch of outputs. All arrays are row-major n × K. */
export interface Loss {
  readonly name: LossName;
  /** Columns of `y` per row (1 for class indices). */
  targetWidth(outputs: number): number;
  /** Mean loss. */
  value(out: Float64Array, y: Float64Array, n: number, k: number): number;
  /** Writes ∂loss/∂out into `g` and returns the mean loss. */
  gradient(out: Float64Array, y: Float64Array, n: number, k: number, g: Float64Array): number;
  /** Writes H_out·u into `r`, H_out = ∂²loss/∂out² (block-diagonal per example; PSD for the built-ins, not necessarily for a user's term). */
  outputHvp(out: Float64Array, y: Float64Array, n: number, k: number, u: Float64Array, r: Float64Array): void;
}

const mse: Loss = {
  name: 'mse',
  targetWidth: (k) => k,
  value(out, y, n, k) {
    const m = n * k;
    let s = 0;
    for (let i = 0; i < m; i++) { const d = out[i] - y[i]; s += d * d; }
    return s / m;
  },
  gradient(out, y, n, k, g) {
    const m = n * k;
    const c = 2 / m;
    let s = 0;
    for (let i = 0; i < m; i++) { const d = out[i] - y[i]; s += d * d; g[i] = c * d; }
    return s / m;
  },
  outputHvp(_out, _y, n, k, u, r) {
    const m = n * k;
    const c = 2 / m;
    for (let i = 0; i < m; i++) r[i] = c * u[i];
  },
};

/** Row maximum and log-sum-exp of row `i` of a logits matrix. */
function logSumExp(z: Float64Array, off: number, k: number): number {
  let mx = -Infinity;
  for (let j = 0; j < k; j++) if (z[off + j] > mx) mx = z[off + j];
  let s = 0;
  for (let j = 0; j < k; j++) s += exp(z[off + j] - mx);
  return mx + log(s);
}

const crossEntropy: Loss = {
  name: 'cross-entropy',
  targetWidth: () => 1,
  value(out, y, n, k) {
    let s = 0;
    for (let i = 0; i < n; i++) s += logSumExp(out, i * k, k) - out[i * k + y[i]];
    return s / n;
  },
  gradient(out, y, n, k, g) {
    // ∂/∂z = (softmax(z) − onehot(c)) / n
    let s = 0;
    const inv = 1 / n;
    for (let i = 0; i < n; i++) {
      const off = i * k;
      const lse = logSumExp(out, off, k);
      s += lse - out[off + y[i]];
      for (let j = 0; j < k; j++) g[off + j] = exp(out[off + j] - lse) * inv;
      g[off + y[i]] -= inv;
    }
    return s / n;
  },
  outputHvp(out, _y, n, k, u, r) {
    // per example (diag(p) − p pᵀ) u / n
    const inv = 1 / n;
    for (let i = 0; i < n; i++) {
      const off = i * k;
      const lse = logSumExp(out, off, k);
      let pu = 0;
      for (let j = 0; j < k; j++) { const p = exp(out[off + j] - lse); r[off + j] = p; pu += p * u[off + j]; }
      for (let j = 0; j < k; j++) { const p = r[off + j]; r[off + j] = p * (u[off + j] - pu) * inv; }
    }
  },
};

const binaryCrossEntropy: Loss = {
  name: 'binary-cross-entropy',
  targetWidth: (k) => k,
  value(out, y, n, k) {
    const m = n * k;
    let s = 0;
    for (let i = 0; i < m; i++) { const z = out[i]; s += Math.max(z, 0) - z * y[i] + log1p(exp(-Math.abs(z))); }
    return s / m;
  },
  gradient(out, y, n, k, g) {
    // ∂/∂z = (σ(z) − y) / m
    const m = n * k;
    let s = 0;
    for (let i = 0; i < m; i++) {
      const z = out[i];
      s += Math.max(z, 0) - z * y[i] + log1p(exp(-Math.abs(z)));
      g[i] = (sigmoid(z) - y[i]) / m;
    }
    return s / m;
  },
  outputHvp(out, _y, n, k, u, r) {
    const m = n * k;
    for (let i = 0; i < m; i++) { const p = sigmoid(out[i]); r[i] = (p * (1 - p) * u[i]) / m; }
  },
};

/** Returns the loss for a name; exhaustive over {@link LossName}. */
export function lossFunction(name: LossName): Loss {
  switch (name) {
    case 'mse': return mse;
    case 'cross-entropy': return crossEntropy;
    case 'binary-cross-entropy': return binaryCrossEntropy;
    case 'expression': throw new Error('an expression loss needs its expression: the network takes it from NetworkOptions.lossExpression');
    default: {
      const never: never = name;
      throw new Error(`unknown loss '${String(never)}'`);
    }
  }
}

/** Every built-in loss name, for table-driven tests (`expression` is the user's own). */
export const LOSSES: readonly LossName[] = ['mse', 'cross-entropy', 'binary-cross-entropy'];
