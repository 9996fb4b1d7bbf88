/** Time per optimizer step of a session on a mid-size network (full batch and mini-batch). */
import { Session } from '../../src/core/session';
import { parseSpec } from '../../src/experiment';
import { Rng } from '../../src/core/rng';
import { timeIt, type BenchResult } from './types';

export const title = 'Session: time per optimizer step (20-64-64-3 tanh, cross-entropy, 256 rows, P = 5699)';

function specText(recipe: string): string {
  // Seeded random data of our own; only the shapes matter for timing.
  const rng = Rng.fromSeed(5);
  const x = Array.from({ length: 256 }, () => Array.from({ length: 20 }, () => Number(rng.normal().toFixed(4))));
  const y = Array.from({ length: 256 }, () => rng.int(3));
  return JSON.stringify({
    seed: 3,
    model: { inputs: 20, layers: [{ units: 64, activation: 'tanh' }, { units: 64, activation: 'tanh' }, { units: 3, activation: 'linear' }] },
    data: { x, y }, loss: 'cross-entropy', recipe: JSON.parse(recipe),
  });
}

const recipes: [string, string][] = [
  ['sgd full batch', '{"optimizer":"sgd","lr":0.05}'],
  ['sgd momentum, batch 32', '{"optimizer":"sgd","lr":0.05,"momentum":0.9,"batch":32}'],
  ['adam full batch', '{"optimizer":"adam","lr":0.001}'],
  ['adam, batch 32', '{"optimizer":"adam","lr":0.001,"batch":32}'],
  ['lbfgs strong Wolfe', '{"optimizer":"lbfgs"}'],
  ['cg Polak-Ribière+', '{"optimizer":"cg"}'],
];

export function run(): BenchResult[] {
  return recipes.map(([name, recipe]) => {
    const r = parseSpec(specText(recipe));
    if (!r.ok) throw new Error(r.errors.map((e) => e.message).join('; '));
    const s = Session.create(r.experiment);
    const t = timeIt(() => s.step(1), 1500, 400);
    return { name, ...t, extra: { 'evaluations/step': s.step(1)[0].evaluations } };
  });
}
