/**
 * First-order gradients of the network objective against an independent, in-process
 * autodiff: TensorFlow.js core with its CPU backend (float32).
 *
 * The networks, data and weights are the invented cases of
 * test/reference/model/golden.json (already checked against PyTorch in float64 by
 * test/reference/model/golden.test.ts); here the same MLP is rebuilt in tfjs from the
 * engine's flat parameter vector (layer by layer: weight [out, in] row-major, then bias)
 * and tfjs's own losses and `tf.grad` give the reference. This pins the layout of the
 * flat vector and the loss conventions against a second framework without Python.
 *
 * Tolerance: relative error ‖a − b‖ / ‖b‖ ≤ 1e-4 for gradients and 1e-5 for losses.
 * tfjs computes in float32 (unit round-off 6e-8); the cases are a few layers deep with
 * well-scaled weights, so accumulated round-off is ~1e-6 at worst, while a wrong layout or
 * loss convention produces errors of order 1 (measured when written: ≤ 1.6e-7 gradient,
 * ≤ 1e-7 loss). Only first-order derivatives are used:
 * tfjs's nested `tf.grad` gave wrong second derivatives in this project's checks
 * (see shared CHECKS.md), so it is never a Hessian-vector reference.
 */
import type * as TF from '@tensorflow/tfjs-core';
import { buildSync } from 'esbuild';
import { readFileSync } from 'fs';
import { join } from 'path';
import { parseSpec } from '../../../src/experiment';
import { buildObjective, initialParameters } from '../../../src/core/assemble';
import { Rng } from '../../../src/core/rng';
import type { ActivationName, LossName } from '../../../src/core/setup';
import { relErr } from '../../reference/compare';

interface GoldenCase {
  name: string;
  spec: {
    model: { inputs: number; layers: { units: number; activation: ActivationName }[] };
    data: { x: number[][]; y: number[][] | number[] };
    loss: LossName;
    regularization: { l2: number };
  };
  batches?: { rows: number[] }[];
}

const golden = JSON.parse(
  readFileSync(join(__dirname, '..', '..', 'reference', 'model', 'golden.json'), 'utf8'),
) as { cases: GoldenCase[] };

/**
 * Loads tfjs-core with its gradient registry and the CPU backend as one CommonJS bundle.
 *
 * Why: the CommonJS build of tfjs-core that jest resolves registers no gradient functions
 * (only the ES-module `dist/register_all_gradients.js` does, and jest does not transform
 * node_modules), so `tf.grad` fails with "gradient function not found". esbuild (present
 * as the engine of the `tsx` dependency) bundles the ES-module sources into one CommonJS
 * text, evaluated inside this test's sandbox; the result is the unmodified library.
 */
function loadTfjs(): typeof TF {
  const out = buildSync({
    stdin: {
      contents:
        "export * from '@tensorflow/tfjs-core';\n" +
        "import '@tensorflow/tfjs-core/dist/register_all_gradients';\n" +
        "import '@tensorflow/tfjs-backend-cpu';\n",
      resolveDir: join(__dirname, '..', '..', '..'),
      sourcefile: 'tfjs-reference-entry.js',
    },
    bundle: true,
    format: 'cjs',
    platform: 'node',
    mainFields: ['module', 'main'],
    write: false,
    logLevel: 'warning',
  });
  const mod: { exports: Record<string, unknown> } = { exports: {} };
  new Function('module', 'exports', 'require', out.outputFiles[0].text)(mod, mod.exports, require);
  return mod.exports as unknown as typeof TF;
}

const tf = loadTfjs();
type Tensor1D = TF.Tensor1D;
type Tensor2D = TF.Tensor2D;
type Scalar = TF.Scalar;

const GRAD_REL = 1e-4;
const LOSS_REL = 1e-5;

beforeAll(async () => {
  tf.env().set('PROD', true); // silences the one-time "use the node backend" notice
  await tf.setBackend('cpu');
  expect(tf.getBackend()).toBe('cpu');
});

/** tfjs activation ops (source: @tensorflow/tfjs-core 4.22, CPU backend). */
function act(name: ActivationName, a: Tensor2D): Tensor2D {
  switch (name) {
    case 'linear':
      return a;
    case 'tanh':
      return tf.tanh(a);
    case 'sigmoid':
      return tf.sigmoid(a);
    case 'relu':
      return tf.relu(a);
    case 'leaky-relu':
      return tf.leakyRelu(a, 0.01);
    case 'softplus':
      return tf.softplus(a);
    case 'elu':
      return tf.elu(a);
    case 'gelu':
      // exact form x·Φ(x) = x·½(1 + erf(x/√2)), composed from tfjs's erf
      return tf.mul(a, tf.mul(0.5, tf.add(1, tf.erf(tf.mul(a, Math.SQRT1_2)))));
    case 'expression':
      throw new Error('expression activations are checked against the built-ins they imitate (test/unit/model/expression.test.ts)');
    default: {
      const never: never = name;
      throw new Error(`no tfjs activation for ${String(never)}`);
    }
  }
}

/** The objective in tfjs: forward pass from the flat vector, tfjs loss, explicit ½·λ·Σ‖W‖². */
function tfObjective(c: GoldenCase, rows?: number[]): (w: Tensor1D) => Scalar {
  const { model, data, loss, regularization } = c.spec;
  const sel = <T>(arr: T[]): T[] => (rows ? rows.map((r) => arr[r]) : arr);
  const x = tf.tensor2d(sel(data.x));
  const n = sel(data.x).length;
  const outputs = model.layers[model.layers.length - 1].units;
  let labels: Tensor2D;
  if (loss === 'cross-entropy') {
    labels = tf.cast(tf.oneHot(tf.tensor1d(sel(data.y as number[]), 'int32'), outputs), 'float32') as Tensor2D;
  } else {
    labels = tf.tensor2d(sel(data.y as number[][]));
  }
  return (w: Tensor1D) => {
    let h: Tensor2D = x;
    let offset = 0;
    let fanIn = model.inputs;
    let reg: Scalar = tf.scalar(0);
    for (const layer of model.layers) {
      const W = tf.reshape(tf.slice(w, offset, layer.units * fanIn), [layer.units, fanIn]) as Tensor2D;
      offset += layer.units * fanIn;
      const b = tf.slice(w, offset, layer.units);
      offset += layer.units;
      reg = tf.add(reg, tf.sum(tf.square(W)));
      h = act(layer.activation, tf.add(tf.matMul(h, W, false, true), b));
      fanIn = layer.units;
    }
    expect(h.shape).toEqual([n, outputs]);
    let value: Scalar;
    switch (loss) {
      case 'mse':
        value = tf.losses.meanSquaredError(labels, h) as Scalar;
        break;
      case 'cross-entropy':
        value = tf.losses.softmaxCrossEntropy(labels, h) as Scalar;
        break;
      case 'binary-cross-entropy':
        value = tf.losses.sigmoidCrossEntropy(labels, h) as Scalar;
        break;
      case 'expression':
        throw new Error('expression losses are checked against the built-ins they imitate (test/unit/model/expression.test.ts)');
      default: {
        const never: never = loss;
        throw new Error(`no tfjs loss for ${String(never)}`);
      }
    }
    return tf.add(value, tf.mul(0.5 * regularization.l2, reg));
  };
}

/** Engine gradient and tfjs gradient at the case's explicit weights. */
function compare(c: GoldenCase, rows?: number[]): { loss: number; grad: number } {
  const parsed = parseSpec(JSON.stringify(c.spec));
  if (!parsed.ok) throw new Error(`${c.name}: spec rejected: ${JSON.stringify(parsed.errors)}`);
  const setup = parsed.experiment.setup;
  const f = buildObjective(setup);
  const w = initialParameters(setup, Rng.fromSeed(1).fork('init'));
  const g = new Float64Array(w.length);
  const value = f.gradient(w, g, rows ? Int32Array.from(rows) : undefined);
  const { ref, refGrad } = tf.tidy(() => {
    const obj = tfObjective(c, rows);
    const wt = tf.tensor1d(Array.from(w));
    const { value: v, grad } = tf.valueAndGrad(obj)(wt);
    return { ref: v.dataSync()[0], refGrad: grad.dataSync() };
  });
  return { loss: Math.abs(value - ref) / Math.abs(ref), grad: relErr(g, refGrad) };
}

// source: @tensorflow/tfjs-core 4.22 + tfjs-backend-cpu 4.22, tf.valueAndGrad in float32
describe('network gradients against TensorFlow.js autodiff (float32)', () => {
  it.each(golden.cases.map((c) => [c.name, c] as const))('%s: full batch', (_n, c) => {
    const e = compare(c);
    expect(e.loss).toBeLessThanOrEqual(LOSS_REL);
    expect(e.grad).toBeLessThanOrEqual(GRAD_REL);
  });

  const batched = golden.cases.flatMap((c) => (c.batches ?? []).map((b) => [`${c.name} rows [${b.rows.join(',')}]`, c, b.rows] as const));
  it.each(batched)('%s: mini-batch', (_n, c, rows) => {
    const e = compare(c, rows);
    expect(e.loss).toBeLessThanOrEqual(LOSS_REL);
    expect(e.grad).toBeLessThanOrEqual(GRAD_REL);
  });

  it('has a reference sensitive enough to see a transposed weight layout', () => {
    // invariant check of the oracle itself: swapping to column-major weights must break agreement
    const c = golden.cases.find((k) => k.name === 'tanh-mse-2h-l2');
    if (!c) throw new Error('case tanh-mse-2h-l2 missing from golden.json');
    const parsed = parseSpec(JSON.stringify(c.spec));
    if (!parsed.ok) throw new Error('spec rejected');
    const f = buildObjective(parsed.experiment.setup);
    const w = initialParameters(parsed.experiment.setup, Rng.fromSeed(1).fork('init'));
    const g = new Float64Array(w.length);
    f.gradient(w, g);
    const units = c.spec.model.layers[0].units;
    const fanIn = c.spec.model.inputs;
    const wt = Float64Array.from(w);
    for (let i = 0; i < units; i++) for (let j = 0; j < fanIn; j++) wt[j * units + i] = w[i * fanIn + j];
    const refGrad = tf.tidy(() => tf.grad((x: TF.Tensor) => tfObjective(c)(x as Tensor1D))(tf.tensor1d(Array.from(wt))).dataSync());
    expect(relErr(g, refGrad)).toBeGreaterThan(1e-2);
  });
});
