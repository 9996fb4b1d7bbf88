/**
 * Reduce-on-plateau as torch.optim.lr_scheduler.ReduceLROnPlateau (mode 'min', PyTorch 1.13),
 * observing the full-batch training loss after every update. Its state lives in the optimizer
 * state's scalars (so checkpoints, fingerprints and replays carry it):
 *
 *   plateau.factor    p, the multiplier of lr in effect (starts at 1)
 *   plateau.best      best loss seen (starts at +∞)
 *   plateau.bad       updates since the last improvement
 *   plateau.cooldown  updates left in the cool-down after a reduction
 *
 * One observation of loss L: improved when L < best·(1 − threshold) ('rel') or L < best − threshold
 * ('abs'); then best ← L and bad ← 0, else bad ← bad + 1; during a cool-down the counter runs
 * down and bad is reset; when bad > patience, p ← max(p·factor, floor), cooldown ← cooldown
 * setting, bad ← 0. torch compares lrs (min_lr = floor·lr per parameter group, and skips a
 * reduction smaller than its eps, here 0); with a warm-up in progress torch's floor applies to
 * the warmed-up lr, ours to p alone — the two differ only when a reduction during the warm-up
 * reaches the floor.
 */
import type { PlateauSchedule } from '../setup';
import type { OptimizerState } from '../state';

/** Adds the plateau scalars, at their starting values, to a fresh optimizer state. */
export function initPlateau(state: OptimizerState): void {
  state.scalars['plateau.factor'] = 1;
  state.scalars['plateau.best'] = Infinity;
  state.scalars['plateau.bad'] = 0;
  state.scalars['plateau.cooldown'] = 0;
}

/** The multiplier p in effect (1 when the state holds no plateau schedule). */
export function plateauFactor(state: OptimizerState): number {
  return state.scalars['plateau.factor'] ?? 1;
}

/** Observes the loss after an update and advances the plateau state in place (module comment). */
export function observePlateau(schedule: PlateauSchedule, state: OptimizerState, loss: number): void {
  const sc = state.scalars;
  const best = sc['plateau.best'];
  const improved = schedule.thresholdMode === 'rel' ? loss < best * (1 - schedule.threshold) : loss < best - schedule.threshold;
  if (improved) {
    sc['plateau.best'] = loss;
    sc['plateau.bad'] = 0;
  } else {
    sc['plateau.bad'] += 1;
  }
  if (sc['plateau.cooldown'] > 0) {
    sc['plateau.cooldown'] -= 1;
    sc['plateau.bad'] = 0;
  }
  if (sc['plateau.bad'] > schedule.patience) {
    sc['plateau.factor'] = Math.max(sc['plateau.factor'] * schedule.factor, schedule.floor);
    sc['plateau.cooldown'] = schedule.cooldown;
    sc['plateau.bad'] = 0;
  }
}
