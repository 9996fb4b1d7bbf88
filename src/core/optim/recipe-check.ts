/**
 * Recipe checks at the core boundary (the CLI, the worker and tests build recipes without the
 * spec parser too). The spec layer gives friendlier, located messages; these guard the numerics:
 * each rule names the field, the allowed range and the value found.
 */
import type { PhaseSchedule, Recipe, ScheduleSetup } from '../setup';

const finite = (x: number): boolean => typeof x === 'number' && Number.isFinite(x);

function need(ok: boolean, field: string, rule: string, value: unknown): void {
  if (!ok) throw new Error(`recipe.${field} must be ${rule}, got ${JSON.stringify(value) ?? String(value)}`);
}

const posInt = (x: number): boolean => Number.isInteger(x) && x >= 1;

function checkSchedule(s: ScheduleSetup, at = 'schedule'): void {
  switch (s.kind) {
    case 'constant':
      return;
    case 'multistep':
      need(s.milestones.length >= 1 && s.milestones.every((m, i) => posInt(m) && (i === 0 || m > s.milestones[i - 1])), `${at}.milestones`, 'increasing positive integers', s.milestones);
      need(finite(s.factor) && s.factor > 0, `${at}.factor`, 'a positive number', s.factor);
      return;
    case 'factor':
      need(finite(s.factor) && s.factor > 0 && s.factor <= 1, `${at}.factor`, 'in (0, 1]', s.factor);
      need(posInt(s.steps), `${at}.steps`, 'a positive integer', s.steps);
      return;
    case 'polynomial':
      need(posInt(s.steps), `${at}.steps`, 'a positive integer', s.steps);
      need(finite(s.power) && s.power > 0, `${at}.power`, 'a positive number', s.power);
      return;
    case 'restarts':
      need(posInt(s.period), `${at}.period`, 'a positive integer', s.period);
      need(posInt(s.growth), `${at}.growth`, 'a positive integer', s.growth);
      need(finite(s.floor) && s.floor >= 0 && s.floor <= 1, `${at}.floor`, 'a number in [0, 1] (a fraction of lr)', s.floor);
      return;
    case 'onecycle':
      need(Number.isInteger(s.steps) && s.steps >= 2, `${at}.steps`, 'an integer of at least 2', s.steps);
      need(finite(s.peak) && s.peak > 0 && s.peak < 1, `${at}.peak`, 'in (0, 1)', s.peak);
      need(finite(s.divisor) && s.divisor > 0, `${at}.divisor`, 'a positive number', s.divisor);
      need(finite(s.finalDivisor) && s.finalDivisor > 0, `${at}.finalDivisor`, 'a positive number', s.finalDivisor);
      need(s.peak * s.steps - 1 > 0 && (s.threePhase ? 2 * s.peak * s.steps - 2 < s.steps - 1 : s.peak * s.steps - 1 < s.steps - 1), `${at}.peak`, `such that every phase of the ${s.steps}-step cycle has at least one step`, s.peak);
      return;
    case 'plateau':
      need(finite(s.factor) && s.factor > 0 && s.factor < 1, `${at}.factor`, 'in (0, 1)', s.factor);
      need(Number.isInteger(s.patience) && s.patience >= 0, `${at}.patience`, 'a non-negative integer', s.patience);
      need(finite(s.threshold) && s.threshold >= 0, `${at}.threshold`, 'a non-negative number', s.threshold);
      need(Number.isInteger(s.cooldown) && s.cooldown >= 0, `${at}.cooldown`, 'a non-negative integer', s.cooldown);
      need(finite(s.floor) && s.floor >= 0 && s.floor <= 1, `${at}.floor`, 'a number in [0, 1] (a fraction of lr)', s.floor);
      return;
    case 'sequence':
      need(s.phases.length >= 2 && s.milestones.length === s.phases.length - 1, `${at}.milestones`, `one milestone fewer than phases (${s.phases.length} phases)`, s.milestones);
      need(s.milestones.every((m, i) => posInt(m) && (i === 0 || m > s.milestones[i - 1])), `${at}.milestones`, 'increasing positive integers', s.milestones);
      s.phases.forEach((p: PhaseSchedule, i) => {
        const kind = (p as ScheduleSetup).kind;
        need(kind !== 'sequence' && kind !== 'plateau' && kind !== 'onecycle', `${at}.phases[${i}].kind`, 'a schedule other than sequence, plateau or onecycle', kind);
        checkSchedule(p, `${at}.phases[${i}]`);
      });
      return;
    case 'step':
      need(Number.isInteger(s.every) && s.every >= 1, `${at}.every`, 'a positive integer', s.every);
      need(finite(s.factor) && s.factor > 0, `${at}.factor`, 'a positive number', s.factor);
      return;
    case 'exponential':
      need(finite(s.gamma) && s.gamma > 0, `${at}.gamma`, 'a positive number', s.gamma);
      return;
    case 'inverse-time':
      need(finite(s.decay) && s.decay >= 0, `${at}.decay`, 'a non-negative number', s.decay);
      return;
    case 'cosine':
      need(Number.isInteger(s.steps) && s.steps >= 1, `${at}.steps`, 'a positive integer', s.steps);
      need(finite(s.floor) && s.floor >= 0 && s.floor <= 1, `${at}.floor`, 'a number in [0, 1] (a fraction of lr)', s.floor);
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
  need(finite(r.dampening) && r.dampening >= 0 && r.dampening <= 1, 'dampening', 'in [0, 1]', r.dampening);
  need(!(r.nesterov && r.dampening !== 0), 'dampening', '0 with Nesterov momentum (as torch.optim.SGD requires)', r.dampening);
  need(finite(r.lrDecay) && r.lrDecay >= 0, 'lrDecay', 'a non-negative number', r.lrDecay);
  need(finite(r.initialAccumulator) && r.initialAccumulator >= 0, 'initialAccumulator', 'a non-negative number', r.initialAccumulator);
  need(finite(r.clipValue) && r.clipValue >= 0, 'clipValue', 'a non-negative number (0 disables clamping)', r.clipValue);
  need(posInt(r.maxIter), 'maxIter', 'a positive integer', r.maxIter);
  need(posInt(r.maxEval), 'maxEval', 'a positive integer', r.maxEval);
  need(finite(r.toleranceGrad) && r.toleranceGrad >= 0, 'toleranceGrad', 'a non-negative number', r.toleranceGrad);
  need(finite(r.toleranceChange) && r.toleranceChange >= 0, 'toleranceChange', 'a non-negative number', r.toleranceChange);
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
  need(!(r.warmup > 0 && r.schedule.kind === 'onecycle'), 'warmup', '0 with a onecycle schedule, which warms up itself (its first phase)', r.warmup);
}
