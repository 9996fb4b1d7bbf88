/**
 * Every optimizer family reaches the known minimizer of a convex quadratic and of the
 * Rosenbrock function from the classic start (−1.2, 1), within a step budget. The budgets are
 * about 1.5× the counts measured when this test was written (in the test names), so a
 * regression that slows an optimizer down shows up here.
 *
 * Expected values: Rosenbrock minimum 0 at (1, 1), start value 24.2 (source: Rosenbrock 1960;
 * Nocedal & Wright 2006 §2); the quadratic ½(w − c)ᵀA(w − c) has its minimum 0 at c (common practice).
 */
import { Session } from '../../../src/core/session';
import type { Objective } from '../../../src/core/objective';
import type { Recipe } from '../../../src/core/setup';
import { experiment, TestQuadratic, TestRosenbrock } from './fixtures';

interface Case {
  name: string;
  recipe: Partial<Recipe>;
  rosen: number;
  quad: number;
}
// [name, recipe, steps allowed on Rosenbrock, steps allowed on the quadratic]; measured counts in comments
const cases: Case[] = [
  { name: 'sgd η=1e-3', recipe: { optimizer: 'sgd', lr: 1e-3 }, rosen: 34000, quad: 10000 }, // measured 22845 / 6766
  { name: 'sgd heavy-ball μ=0.9', recipe: { optimizer: 'sgd', lr: 1e-3, momentum: 0.9 }, rosen: 3200, quad: 900 }, // 2133 / 584
  { name: 'sgd Nesterov μ=0.9', recipe: { optimizer: 'sgd', lr: 1e-3, momentum: 0.9, nesterov: true }, rosen: 3300, quad: 900 }, // 2176 / 593
  { name: 'adagrad η=0.5', recipe: { optimizer: 'adagrad', lr: 0.5 }, rosen: 18000, quad: 130 }, // 11856 / 86
  { name: 'rmsprop, exponential schedule γ=0.9997', recipe: { optimizer: 'rmsprop', lr: 1e-3, schedule: { kind: 'exponential', gamma: 0.9997 } }, rosen: 20000, quad: 9600 }, // 13192 / 6418
  { name: 'rmsprop, cosine schedule to 1 %', recipe: { optimizer: 'rmsprop', lr: 1e-3, schedule: { kind: 'cosine', steps: 20000, floor: 0.01 } }, rosen: 22000, quad: 22000 }, // 15051 / 15151
  { name: 'rmsprop centered + momentum, step schedule', recipe: { optimizer: 'rmsprop', lr: 1e-3, centered: true, momentum: 0.5, schedule: { kind: 'step', every: 2000, factor: 0.5 } }, rosen: 5700, quad: 1600 }, // 3767 / 1049
  { name: 'rmsprop momentum 0.9, step schedule', recipe: { optimizer: 'rmsprop', lr: 2e-4, momentum: 0.9, schedule: { kind: 'step', every: 2000, factor: 0.5 } }, rosen: 3600, quad: 2300 }, // 2393 / 1496
  { name: 'adam η=0.02', recipe: { optimizer: 'adam', lr: 0.02 }, rosen: 5200, quad: 640 }, // 3428 / 425
  { name: 'adam amsgrad η=0.02', recipe: { optimizer: 'adam', lr: 0.02, amsgrad: true }, rosen: 13000, quad: 700 }, // 8672 / 454
  { name: 'adamw η=0.02 λ=0', recipe: { optimizer: 'adamw', lr: 0.02, weightDecay: 0 }, rosen: 5200, quad: 640 }, // 3428 / 425
  { name: 'lbfgs strong Wolfe', recipe: { optimizer: 'lbfgs', lr: 1 }, rosen: 53, quad: 8 }, // 35 / 5
  { name: 'lbfgs Brent', recipe: { optimizer: 'lbfgs', lr: 1, lineSearch: 'brent' }, rosen: 30, quad: 3 }, // 19 / 2
  { name: 'cg Polak–Ribière+', recipe: { optimizer: 'cg', lr: 1 }, rosen: 54, quad: 3 }, // 36 / 2
  { name: 'cg Fletcher–Reeves', recipe: { optimizer: 'cg', lr: 1, cgVariant: 'fletcher-reeves' }, rosen: 84, quad: 3 }, // 56 / 2
  { name: 'cg Brent', recipe: { optimizer: 'cg', lr: 1, lineSearch: 'brent' }, rosen: 48, quad: 3 }, // 32 / 2
  { name: 'newton λ=0', recipe: { optimizer: 'newton', lr: 1, damping: 0 }, rosen: 30, quad: 1 }, // 20 / 1
  { name: 'gauss-newton λ=0', recipe: { optimizer: 'gauss-newton', lr: 1, damping: 0 }, rosen: 18, quad: 1 }, // 12 / 1
  { name: 'minibatch-lbfgs (full batch here), 10 inner', recipe: { optimizer: 'minibatch-lbfgs', lr: 1 }, rosen: 9, quad: 2 }, // 6 / 1
];

function stepsToReach(objective: Objective, recipe: Partial<Recipe>, budget: number): { steps: number; dist: number; loss: number } {
  const s = Session.create(experiment(recipe), { objective, initial: Float64Array.of(-1.2, 1) });
  for (let k = 1; k <= budget; k++) {
    const [r] = s.step();
    const dist = Math.hypot(s.parameters[0] - 1, s.parameters[1] - 1);
    if (dist < 1e-4) return { steps: k, dist, loss: r.loss };
    if (!Number.isFinite(r.loss)) break;
  }
  return { steps: Infinity, dist: Math.hypot(s.parameters[0] - 1, s.parameters[1] - 1), loss: s.fullLoss() };
}

describe('convergence to the known minimizer (‖w − w*‖ < 1e-4)', () => {
  it('the Rosenbrock fixture has f(−1.2, 1) = 24.2 and f(1, 1) = 0', () => {
    // source: Rosenbrock 1960; Nocedal & Wright 2006 §2
    const r = new TestRosenbrock();
    expect(r.value(Float64Array.of(-1.2, 1))).toBeCloseTo(24.2, 12);
    expect(r.value(Float64Array.of(1, 1))).toBe(0);
  });

  it.each(cases)('$name on Rosenbrock from (−1.2, 1) within $rosen steps', ({ recipe, rosen }) => {
    const r = stepsToReach(new TestRosenbrock(), recipe, rosen);
    expect(r.steps).toBeLessThanOrEqual(rosen);
    // ½·λmax·‖w − w*‖² with λmax ≈ 1001.6 at (1, 1) bounds the loss at distance 1e-4 by 5e-6
    // (source: Rosenbrock Hessian [[802, −400], [−400, 200]] at the minimum, CHECKS.md)
    expect(r.loss).toBeLessThan(5.1e-6);
  });

  it.each(cases)('$name on the quadratic A = [[3, 1], [1, 2]], c = (1, 1) within $quad steps', ({ recipe, quad }) => {
    const r = stepsToReach(new TestQuadratic([[3, 1], [1, 2]], [1, 1]), recipe, quad);
    expect(r.steps).toBeLessThanOrEqual(quad);
  });
});

describe('finite termination on a quadratic with exact line searches', () => {
  // source: Nocedal & Wright 2006, Thm. 5.2 (CG with exact steps ends in at most n steps on a
  // strictly convex quadratic) and Thm. 6.4 (BFGS with exact line searches: at most n steps);
  // Newton's method minimizes a quadratic in one step (common practice).
  const a = [[4, 1, 0.5], [1, 3, 0.2], [0.5, 0.2, 2]];
  const c = [0.3, -0.7, 1.1];
  const start = Float64Array.of(2, 2, 2);
  it.each<[string, number, Partial<Recipe>]>([
    ['cg Fletcher–Reeves + Brent', 3, { optimizer: 'cg', cgVariant: 'fletcher-reeves', lineSearch: 'brent', lr: 1 }],
    ['cg Polak–Ribière+ + Brent', 3, { optimizer: 'cg', lineSearch: 'brent', lr: 1 }],
    ['lbfgs + Brent', 3, { optimizer: 'lbfgs', lineSearch: 'brent', lr: 1 }],
    ['newton', 1, { optimizer: 'newton', damping: 0, lineSearch: 'none', lr: 1 }]
  ])('%s reaches c in at most %p steps on a 3-D quadratic', (_n, n, recipe) => {
    const obj = new TestQuadratic(a, c);
    const s = Session.create(experiment(recipe), { objective: obj, initial: start });
    s.step(n);
    for (let i = 0; i < 3; i++) expect(Math.abs(s.parameters[i] - c[i])).toBeLessThan(1e-6);
  });
});
