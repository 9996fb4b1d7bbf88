/**
 * Recipe checks at the core boundary (the CLI, the worker and tests build recipes without the
 * spec parser too). The spec layer gives friendlier, located messages; these guard the numerics:
 * each rule names the field, the allowed range and the value found.
 */
import type { Recipe, ScheduleSetup } from '../setup';

const finite = (x: number): boolean => typeof x === 'number' && Number.isFinite(x);

function need(ok: boolean, field: string, rule: string, value: unknown): void {
  if (!ok) throw new Error(`recipe.${field} must be ${rule}, got ${JSON.stringify(value) ?? String(value)}`);
}

function checkSchedule(s: ScheduleSetup): void {
  switch (s.kind) {
    case 'constant':
      return;
    case 'step':
      need(Number.isInteger(s.every) && s.every >= 1, 'schedule.every', 'a positive integer', s.every);
      need(finite(s.factor) && s.factor > 0, 'schedule.factor', 'a positive number', s.factor);
      return;
    case 'exponential':
      need(finite(s.gamma) && s.gamma > 0, 'schedule.gamma', 'a positive number', s.gamma);
      return;
    case 'inverse-time':
      need(finite(s.decay) && s.decay >= 0, 'schedule.decay', 'a non-negative number', s.decay);
      return;
    case 'cosine':
      need(Number.isInteger(s.steps) && s.steps >= 1, 'schedule.steps', 'a positive integer', s.steps);
      need(finite(s.floor) && s.floor >= 0 && s.floor <= 1, 'schedule.floor', 'a number in [0, 1] (a fraction of lr)', s.floor);
      return;
    default: {
      const never: never = s;
      throw new Error(`recipe.schedule.kind is unknown: ${JSON.stringify(never)}`);
    }
  }
}

/** Throws on the first recipe field outside the range the optimizers can work with. */
export function checkRecipe(r: Recipe): void {
  need(finite(r.lr) && r.lr > 0, 'lr', 'a positive finite number', r.lr);
  need(finite(r.momentum) && r.momentum >= 0, 'momentum', 'a non-negative number', r.momentum);
  need(finite(r.beta1) && r.beta1 >= 0 && r.beta1 < 1, 'beta1', 'in [0, 1)', r.beta1);
  need(finite(r.beta2) && r.beta2 >= 0 && r.beta2 < 1, 'beta2', 'in [0, 1)', r.beta2);
  need(finite(r.eps) && r.eps >= 0, 'eps', 'a non-negative number', r.eps);
  need(finite(r.alpha) && r.alpha >= 0 && r.alpha < 1, 'alpha', 'in [0, 1)', r.alpha);
  need(finite(r.weightDecay) && r.weightDecay >= 0, 'weightDecay', 'a non-negative number', r.weightDecay);
  need(r.batch === 'full' || (Number.isInteger(r.batch) && r.batch >= 1), 'batch', "'full' or a positive integer", r.batch);
  need(Number.isInteger(r.warmup) && r.warmup >= 0, 'warmup', 'a non-negative integer', r.warmup);
  need(finite(r.clipNorm) && r.clipNorm >= 0, 'clipNorm', 'a non-negative number (0 disables clipping)', r.clipNorm);
  r.layers.forEach((l, i) => need(finite(l.lrScale) && l.lrScale >= 0, `layers[${i}].lrScale`, 'a non-negative number', l.lrScale));
  need(Number.isInteger(r.history) && r.history >= 1, 'history', 'a positive integer', r.history);
  need(finite(r.damping) && r.damping >= 0, 'damping', 'a non-negative number', r.damping);
  need(Number.isInteger(r.innerSteps) && r.innerSteps >= 1, 'innerSteps', 'a positive integer', r.innerSteps);
  const cb = r.curvatureBatch;
  need(cb === 'same' || cb === 'full' || (Number.isInteger(cb) && cb >= 1), 'curvatureBatch', "'same', 'full' or a positive integer", cb);
  checkSchedule(r.schedule);
}
