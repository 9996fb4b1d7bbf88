/**
 * Learning-rate schedules and linear warm-up. The learning rate of update number t
 * (t = 0 for the first update) is η_t = lr · warm(t) · sched(t) with
 *
 *   constant:     sched = 1
 *   step:         sched = factor^⌊t / every⌋                       (torch StepLR)
 *   exponential:  sched = gamma^t                                  (torch ExponentialLR)
 *   inverse-time: sched = 1 / (1 + decay·t)                        (common practice)
 *   cosine:       sched = floor + (1 − floor)·½(1 + cos(π·min(t, steps)/steps))
 *                 (Loshchilov & Hutter, SGDR, ICLR 2017, without restarts; `floor` is a
 *                 fraction of lr, held after `steps` updates)
 *   warm-up:      warm = min(1, (t + 1) / warmup), so update `warmup − 1` is the first at full lr
 *                 and no update is wasted at lr 0 (common practice, Goyal et al. 2017).
 * Powers use {@link powInt} and the cosine core's own {@link cos}: the same bits in every engine.
 */
import type { Recipe, ScheduleSetup } from '../setup';
import { cos } from '../elementary';
import { powInt } from './powers';

/** Multiplier of the schedule alone at update t (0-based). */
export function scheduleFactor(schedule: ScheduleSetup, t: number): number {
  switch (schedule.kind) {
    case 'constant':
      return 1;
    case 'step':
      return powInt(schedule.factor, Math.floor(t / schedule.every));
    case 'exponential':
      return powInt(schedule.gamma, t);
    case 'inverse-time':
      return 1 / (1 + schedule.decay * t);
    case 'cosine': {
      const frac = Math.min(t, schedule.steps) / schedule.steps;
      return schedule.floor + (1 - schedule.floor) * 0.5 * (1 + cos(Math.PI * frac));
    }
    default: {
      const never: never = schedule;
      throw new Error(`unknown schedule ${JSON.stringify(never)}`);
    }
  }
}

/** Linear warm-up multiplier min(1, (t + 1)/warmup); 1 when warmup is 0. */
export function warmupFactor(warmup: number, t: number): number {
  return warmup > 0 && t + 1 < warmup ? (t + 1) / warmup : 1;
}

/** Learning rate in effect for update t (0-based): lr · warm-up · schedule. */
export function learningRate(recipe: Recipe, t: number): number {
  return recipe.lr * warmupFactor(recipe.warmup, t) * scheduleFactor(recipe.schedule, t);
}
