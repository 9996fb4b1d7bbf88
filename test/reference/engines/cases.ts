/**
 * The experiments the four-engine replay runs: every activation, loss and optimizer family,
 * the user's own activations written as expressions, every init scheme, full and mini-batches, each schedule, warm-up, clipping, weight decay,
 * per-layer rates and a held-out split. Data are our own seeded draws (rounded to 4 decimals,
 * so the JSON text is short and parses to the same doubles everywhere).
 */
import { parseSpec } from '../../../src/experiment';
import { Rng } from '../../../src/core/rng';
import type { Experiment } from '../../../src/core/setup';
import type { ActivationName, LossName } from '../../../src/core/setup';

/** One case: the spec (JSON, which the spec layer reads like YAML) and how many updates to replay. */
export interface EngineCase {
  name: string;
  spec: Record<string, unknown>;
  steps: number;
}

const r4 = (x: number): number => Math.round(x * 1e4) / 1e4;

/** Seeded rows: inputs in (−1, 1); targets by loss (regression values, class indices or 0/1). */
function rows(seed: number, n: number, inputs: number, loss: LossName, outputs: number): { x: number[][]; y: number[] | number[][] } {
  const rng = Rng.fromSeed(seed).fork('engine-case');
  const x: number[][] = [];
  const y: number[][] = [];
  for (let i = 0; i < n; i++) {
    const row = Array.from({ length: inputs }, () => r4(2 * rng.uniform() - 1));
    x.push(row);
    const s = row.reduce((a, v, j) => a + (j % 2 === 0 ? v : -0.5 * v), 0);
    if (loss === 'cross-entropy') y.push([i % outputs]);
    else if (loss === 'binary-cross-entropy') y.push(Array.from({ length: outputs }, (_, k) => (s + 0.3 * k + 0.2 * rng.normal() > 0 ? 1 : 0)));
    else y.push(Array.from({ length: outputs }, (_, k) => r4(0.8 * s - 0.2 * k + 0.1 * rng.normal())));
  }
  return { x, y: loss === 'cross-entropy' ? y.map((r) => r[0]) : y };
}

interface NetCase {
  name: string;
  /** A built-in activation, or the user's own as `{ expr, derivative? }`. */
  act: ActivationName | { expr: string; derivative?: string };
  loss: LossName;
  init: string;
  recipe: Record<string, unknown>;
  steps?: number;
  hidden?: number[];
  l2?: number;
}

function network(c: NetCase, seed: number): EngineCase {
  const inputs = 3;
  const outputs = c.loss === 'cross-entropy' ? 3 : c.loss === 'binary-cross-entropy' ? 2 : 1;
  const hidden = c.hidden ?? [6, 5];
  const train = rows(seed, 24, inputs, c.loss, outputs);
  const held = rows(seed + 1000, 8, inputs, c.loss, outputs);
  return {
    name: c.name,
    steps: c.steps ?? 25,
    spec: {
      seed,
      model: {
        inputs,
        layers: [...hidden.map((units) => ({ units, activation: c.act })), { units: outputs, activation: 'linear' }],
        init: c.init,
      },
      data: { x: train.x, y: train.y, heldOut: { x: held.x, y: held.y } },
      loss: c.loss,
      ...(c.l2 ? { regularization: { l2: c.l2 } } : {}),
      recipe: c.recipe,
    },
  };
}

/** Every case, in a fixed order. */
export const ENGINE_CASES: readonly EngineCase[] = [
  network({ name: 'tanh · mse · sgd Nesterov · full batch', act: 'tanh', loss: 'mse', init: 'glorot-normal', recipe: { optimizer: 'sgd', lr: 0.1, momentum: 0.9, nesterov: true } }, 1),
  network({ name: 'sigmoid · binary cross-entropy · adam · batch 8 · cosine + warm-up · clipping', act: 'sigmoid', loss: 'binary-cross-entropy', init: 'he-uniform', recipe: { optimizer: 'adam', lr: 0.05, batch: 8, schedule: { kind: 'cosine', steps: 20, floor: 0.1 }, warmup: 4, clipNorm: 0.5 } }, 2),
  network({ name: 'relu · cross-entropy · centered rmsprop · batch 10 · step schedule', act: 'relu', loss: 'cross-entropy', init: 'orthogonal', recipe: { optimizer: 'rmsprop', lr: 0.01, momentum: 0.5, centered: true, batch: 10, schedule: { kind: 'step', every: 7, factor: 0.5 } } }, 3),
  network({ name: 'leaky-relu · mse · adagrad · exponential schedule', act: 'leaky-relu', loss: 'mse', init: 'lecun-uniform', recipe: { optimizer: 'adagrad', lr: 0.1, schedule: { kind: 'exponential', gamma: 0.97 } } }, 4),
  network({ name: 'softplus · mse · adamw amsgrad · batch 12 · inverse-time · l2', act: 'softplus', loss: 'mse', init: 'he-normal', l2: 1e-3, recipe: { optimizer: 'adamw', lr: 0.02, amsgrad: true, batch: 12, schedule: { kind: 'inverse-time', decay: 0.05 }, clipNorm: 2 } }, 5),
  network({ name: 'elu · cross-entropy · lbfgs strong Wolfe', act: 'elu', loss: 'cross-entropy', init: 'glorot-uniform', recipe: { optimizer: 'lbfgs', lr: 1, history: 5 }, steps: 15 }, 6),
  network({ name: 'gelu · binary cross-entropy · cg Polak-Ribière, Brent', act: 'gelu', loss: 'binary-cross-entropy', init: 'lecun-normal', recipe: { optimizer: 'cg', lr: 0.5, lineSearch: 'brent' }, steps: 12 }, 7),
  network({ name: 'tanh · mse · newton', act: 'tanh', loss: 'mse', init: 'lecun-normal', hidden: [4], recipe: { optimizer: 'newton', lr: 1, damping: 1e-2 }, steps: 8 }, 8),
  network({ name: 'sigmoid · cross-entropy · gauss-newton, fixed step', act: 'sigmoid', loss: 'cross-entropy', init: 'glorot-normal', hidden: [4], recipe: { optimizer: 'gauss-newton', lr: 0.5, lineSearch: 'none' }, steps: 8 }, 9),
  network({ name: 'gelu · cross-entropy · minibatch-lbfgs · batch 12', act: 'gelu', loss: 'cross-entropy', init: 'he-uniform', recipe: { optimizer: 'minibatch-lbfgs', lr: 1, batch: 12, innerSteps: 3 }, steps: 10 }, 10),
  network({ name: 'elu · mse · sgd, weight decay, per-layer rates, batch 5', act: 'elu', loss: 'mse', init: 'he-normal', recipe: { optimizer: 'sgd', lr: 0.05, momentum: 0.5, weightDecay: 1e-3, batch: 5, layers: [{ lrScale: 1 }, { lrScale: 0.5 }, { lrScale: 2 }] } }, 11),
  network({ name: 'linear + tanh · mse · adam · curvature batch', act: 'tanh', loss: 'mse', init: 'orthogonal', hidden: [7], recipe: { optimizer: 'adam', lr: 0.03, batch: 6, curvatureBatch: 9 } }, 12),
  network({ name: 'tanh · mse · sgd · polynomial schedule, power 0.7', act: 'tanh', loss: 'mse', init: 'glorot-uniform', hidden: [5], recipe: { optimizer: 'sgd', lr: 0.2, schedule: { kind: 'polynomial', steps: 20, power: 0.7 } } }, 14),
  network({ name: 'softplus · cross-entropy · sgd momentum · warm restarts · batch 8', act: 'softplus', loss: 'cross-entropy', init: 'lecun-normal', hidden: [6], recipe: { optimizer: 'sgd', lr: 0.3, momentum: 0.9, batch: 8, schedule: { kind: 'restarts', period: 6, growth: 2, floor: 0.05 } } }, 15),
  network({ name: 'sigmoid · mse · adam · one-cycle', act: 'sigmoid', loss: 'mse', init: 'he-normal', hidden: [6], recipe: { optimizer: 'adam', lr: 0.05, schedule: { kind: 'onecycle', steps: 25 } } }, 16),
  network({ name: 'own activation x/(1 + e^−x) + 0.1·sin x, derivatives derived · mse · sgd momentum · batch 8', act: { expr: 'x / (1 + exp(-x)) + 0.1 * sin(x)' }, loss: 'mse', init: 'he-normal', hidden: [5], recipe: { optimizer: 'sgd', lr: 0.05, momentum: 0.9, batch: 8 } }, 17),
  network({ name: 'own activation softsign with its derivative written · cross-entropy · adam', act: { expr: 'x / (1 + abs(x))', derivative: '1 / (1 + abs(x))^2' }, loss: 'cross-entropy', init: 'glorot-normal', recipe: { optimizer: 'adam', lr: 0.02 } }, 18),
  network({ name: 'own activation tanh(x) (sech² derived) · binary cross-entropy · lbfgs', act: { expr: 'tanh(x)' }, loss: 'binary-cross-entropy', init: 'lecun-normal', hidden: [5], recipe: { optimizer: 'lbfgs', lr: 1, history: 4 }, steps: 10 }, 19),
  // Hidden layers at least sixteen wide, so the SIMD engines' products over ReLU outputs and errors take the sparse kernels.
  network({ name: 'relu, layers 20 and 18 wide · cross-entropy · sgd momentum', act: 'relu', loss: 'cross-entropy', init: 'he-normal', hidden: [20, 18], recipe: { optimizer: 'sgd', lr: 0.1, momentum: 0.9 }, steps: 20 }, 20),
  { name: 'rosenbrock · adam', steps: 30, spec: { seed: 13, model: { objective: 'rosenbrock' }, recipe: { optimizer: 'adam', lr: 0.05 } } },
];

/** The normalized experiment of a case (the spec layer's defaults applied), or an error naming the case. */
export function caseExperiment(c: EngineCase): Experiment {
  const r = parseSpec(JSON.stringify(c.spec));
  if (!r.ok) throw new Error(`engine case '${c.name}': ${r.errors.map((e) => `${e.path}: ${e.message}`).join('; ')}`);
  return r.experiment;
}
