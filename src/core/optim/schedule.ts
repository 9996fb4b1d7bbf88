/**
 * Learning-rate schedules and linear warm-up. The learning rate of update number t
 * (t = 0 for the first update) is η_t = lr · warm(t) · sched(t): warm-up and schedule multiply,
 * which is what torch's `ChainedScheduler([LinearLR(...), <schedule>])` computes for the
 * multiplicative schedules. Each schedule equals the PyTorch scheduler named beside it when that
 * scheduler is stepped once after every update (checked in test/reference/optim/schedules):
 *
 *   constant:     1
 *   step:         factor^⌊t / every⌋                                     (StepLR)
 *   multistep:    factor^(number of milestones ≤ t)                       (MultiStepLR)
 *   factor:       factor for t < steps, then 1                             (ConstantLR)
 *   exponential:  gamma^t                                                  (ExponentialLR)
 *   inverse-time: 1 / (1 + decay·t)                                        (LambdaLR; common practice)
 *   polynomial:   (1 − min(t, steps)/steps)^power                          (PolynomialLR)
 *   cosine:       floor + (1 − floor)·½(1 + cos(π·min(t, steps)/steps))    (CosineAnnealingLR with
 *                 eta_min = floor·lr while t ≤ steps; held at floor afterwards, where torch's
 *                 cosine would rise again — SGDR without restarts, Loshchilov & Hutter, ICLR 2017)
 *   restarts:     floor + (1 − floor)·½(1 + cos(π·t_cur/T_i)), periods T_0 = period, T_{i+1} =
 *                 growth·T_i, t_cur = t minus the completed periods      (CosineAnnealingWarmRestarts)
 *   onecycle:     the one-cycle policy relative to its peak lr (Smith & Topin 2019) as OneCycleLR
 *                 with max_lr = lr, cycle_momentum off; held at its final value from t = steps − 1 on,
 *                 where torch refuses to step further
 *   plateau:      p, the reduce-on-plateau multiplier kept in the optimizer state (`plateau.ts`)
 *   sequence:     phase i's schedule at t − m_{i−1} for m_{i−1} ≤ t < m_i        (SequentialLR)
 *   warm-up:      warm = min(1, (t + 1) / warmup), so update `warmup − 1` is the first at full lr
 *                 and no update is wasted at lr 0 (common practice, Goyal et al. 2017); torch's
 *                 LinearLR(start_factor = 1/warmup, total_iters = warmup − 1)
 * Integer powers use {@link powInt}; cos and non-integer powers core's own `cos` and `pow`
 * (core/elementary): the same bits in every engine.
 */
import type { PhaseSchedule, Recipe, ScheduleSetup } from '../setup';
import { cos, pow } from '../elementary';
import { powInt } from './powers';

type OneCycle = Extract<ScheduleSetup, { kind: 'onecycle' }>;

/** ½(1 + cos(π·x)) between `from` (x = 0) and `to` (x = 1), as torch's cosine annealing. */
function cosineBetween(from: number, to: number, x: number): number {
  return to + ((from - to) / 2) * (cos(Math.PI * x) + 1);
}

/** OneCycleLR's multiplier of the peak lr at update t (torch 1.13 `OneCycleLR.get_lr`, divided by max_lr). */
function oneCycle(s: OneCycle, t: number): number {
  const start = 1 / s.divisor;
  const end = start / s.finalDivisor;
  const n = s.steps;
  const phases: [number, number, number][] = s.threePhase
    ? [[s.peak * n - 1, start, 1], [2 * s.peak * n - 2, 1, start], [n - 1, start, end]]
    : [[s.peak * n - 1, start, 1], [n - 1, 1, end]];
  const step = Math.min(t, n - 1);
  let from = 0;
  for (let i = 0; i < phases.length; i++) {
    const [until, a, b] = phases[i];
    if (step <= until || i === phases.length - 1) {
      const pct = (step - from) / (until - from);
      return s.anneal === 'cos' ? cosineBetween(a, b, pct) : (b - a) * pct + a;
    }
    from = until;
  }
  return end;
}

/** Position inside cosine warm restarts: [t_cur, T_i] for periods period·growth^i. */
function restartPosition(period: number, growth: number, t: number): [number, number] {
  if (growth === 1) return [t % period, period];
  let len = period;
  let rest = t;
  while (rest >= len) {
    rest -= len;
    len *= growth;
  }
  return [rest, len];
}

/** Multiplier of a schedule that needs no state, at update t (0-based). */
function phaseFactor(schedule: PhaseSchedule | OneCycle, t: number): number {
  switch (schedule.kind) {
    case 'constant':
      return 1;
    case 'step':
      return powInt(schedule.factor, Math.floor(t / schedule.every));
    case 'multistep': {
      let passed = 0;
      for (const m of schedule.milestones) if (m <= t) passed++;
      return powInt(schedule.factor, passed);
    }
    case 'factor':
      return t < schedule.steps ? schedule.factor : 1;
    case 'exponential':
      return powInt(schedule.gamma, t);
    case 'inverse-time':
      return 1 / (1 + schedule.decay * t);
    case 'polynomial': {
      const base = 1 - Math.min(t, schedule.steps) / schedule.steps;
      return Number.isInteger(schedule.power) ? powInt(base, schedule.power) : pow(base, schedule.power);
    }
    case 'cosine': {
      const frac = Math.min(t, schedule.steps) / schedule.steps;
      return schedule.floor + (1 - schedule.floor) * 0.5 * (1 + cos(Math.PI * frac));
    }
    case 'restarts': {
      const [cur, len] = restartPosition(schedule.period, schedule.growth, t);
      return cosineBetween(1, schedule.floor, cur / len);
    }
    case 'onecycle':
      return oneCycle(schedule, t);
    default: {
      const never: never = schedule;
      throw new Error(`unknown schedule ${JSON.stringify(never)}`);
    }
  }
}

/**
 * Multiplier of the schedule alone at update t (0-based). `plateau` is the multiplier kept in
 * the optimizer state: pass it as `plateau` (default 1, its value before any reduction).
 */
export function scheduleFactor(schedule: ScheduleSetup, t: number, plateau = 1): number {
  switch (schedule.kind) {
    case 'plateau':
      return plateau;
    case 'sequence': {
      const m = schedule.milestones;
      let i = 0;
      while (i < m.length && m[i] <= t) i++;
      return phaseFactor(schedule.phases[i], i === 0 ? t : t - m[i - 1]);
    }
    default:
      return phaseFactor(schedule, t);
  }
}

/** Linear warm-up multiplier min(1, (t + 1)/warmup); 1 when warmup is 0. */
export function warmupFactor(warmup: number, t: number): number {
  return warmup > 0 && t + 1 < warmup ? (t + 1) / warmup : 1;
}

/**
 * Learning rate in effect for update t (0-based): lr · warm-up · schedule.
 * @param plateau the reduce-on-plateau multiplier from the optimizer state (1 without one)
 */
export function learningRate(recipe: Recipe, t: number, plateau = 1): number {
  return recipe.lr * warmupFactor(recipe.warmup, t) * scheduleFactor(recipe.schedule, t, plateau);
}
