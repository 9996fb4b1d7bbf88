/** A small regression network experiment (scenario of our own) built through core/assemble. */
import { Rng } from '../../../src/core/rng';
import type { Experiment, Recipe } from '../../../src/core/setup';
import { recipe } from '../optim/fixtures';

/** 3 inputs → 8 tanh → 1 linear, 64 training rows and 16 held-out rows, y = sin(x·a) + noise. */
export function networkExperiment(patch: Partial<Recipe> = {}, seed = 11): Experiment {
  const rng = Rng.fromSeed(2024);
  const make = (rows: number): { x: Float64Array; y: Float64Array } => {
    const x = new Float64Array(rows * 3);
    const y = new Float64Array(rows);
    for (let r = 0; r < rows; r++) {
      let z = 0;
      for (let j = 0; j < 3; j++) {
        x[r * 3 + j] = rng.normal();
        z += x[r * 3 + j] * (0.5 + 0.25 * j);
      }
      y[r] = Math.sin(z) + 0.05 * rng.normal();
    }
    return { x, y };
  };
  const train = make(64);
  const held = make(16);
  return {
    seed,
    setup: {
      model: { kind: 'network', inputs: 3, layers: [{ units: 8, activation: 'tanh' }, { units: 1, activation: 'linear' }], init: 'glorot-normal', gain: 1 },
      data: { rows: 64, inputs: 3, targets: 1, x: train.x, y: train.y, heldOut: { rows: 16, x: held.x, y: held.y } },
      loss: 'mse',
      l2: 0
    },
    recipe: recipe(patch)
  };
}
