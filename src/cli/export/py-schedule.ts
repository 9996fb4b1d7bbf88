/**
 * The learning-rate schedule of a recipe as PyTorch code: torch.optim.lr_scheduler classes where
 * a class computes exactly Stepwell's rate (each pairing is checked by the golden tests in
 * test/reference/optim and by the export round trip), otherwise one `LambdaLR` with Stepwell's
 * multiplier written out in Python and a comment saying why.
 *
 * Stepwell's rate is lr · warm(t) · sched(t) (`core/optim/schedule.ts`). A warm-up chains with the
 * multiplicative schedulers (StepLR, MultiStepLR, ConstantLR, ExponentialLR, PolynomialLR)
 * through `ChainedScheduler`; with reduce-on-plateau the two are
 * stepped one after the other; in every other combination a single LambdaLR carries the product.
 */
import type { PhaseSchedule, Recipe, ScheduleSetup } from '../../core/setup';
import { py } from './py-text';

/** Python code that builds the schedulers and steps them after every update. */
export interface ScheduleCode {
  /** Lines that define `schedulers` (a list) after `opt` exists; empty for a constant rate. */
  build: string[];
  /** Lines of `def advance_schedules(loss):` (indented by the caller). */
  advance: string[];
}

/** Python expression of a schedule's multiplier at update `t` (mirrors `core/optim/schedule.ts`). */
function factorExpr(s: ScheduleSetup, t = 't'): string {
  switch (s.kind) {
    case 'constant':
      return '1.0';
    case 'step':
      return `${py(s.factor)} ** (${t} // ${s.every})`;
    case 'multistep':
      return `${py(s.factor)} ** sum(1 for m in ${JSON.stringify(s.milestones)} if m <= ${t})`;
    case 'factor':
      return `(${py(s.factor)} if ${t} < ${s.steps} else 1.0)`;
    case 'exponential':
      return `${py(s.gamma)} ** ${t}`;
    case 'inverse-time':
      return `1.0 / (1.0 + ${py(s.decay)} * ${t})`;
    case 'polynomial':
      return `(1.0 - min(${t}, ${s.steps}) / ${s.steps}) ** ${py(s.power)}`;
    case 'cosine':
      return `${py(s.floor)} + (1.0 - ${py(s.floor)}) * 0.5 * (1.0 + math.cos(math.pi * min(${t}, ${s.steps}) / ${s.steps}))`;
    case 'restarts':
      return `restart_cosine(${t}, ${s.period}, ${s.growth}, ${py(s.floor)})`;
    case 'onecycle':
    case 'plateau':
      throw new Error(`${s.kind} has no closed form here`);
    case 'sequence': {
      const m = s.milestones;
      let expr = factorExpr(s.phases[s.phases.length - 1], `(${t} - ${m[m.length - 1]})`);
      for (let i = s.phases.length - 2; i >= 0; i--) {
        const local = i === 0 ? t : `(${t} - ${m[i - 1]})`;
        expr = `(${factorExpr(s.phases[i], local)} if ${t} < ${m[i]} else ${expr})`;
      }
      return expr;
    }
    default: {
      const never: never = s;
      throw new Error(`unknown schedule ${JSON.stringify(never)}`);
    }
  }
}

/** A torch scheduler computing exactly `s` (for every update) on its own, or undefined. */
function torchClass(s: PhaseSchedule, lr: number, uniform: boolean): string | undefined {
  switch (s.kind) {
    case 'step':
      return `S.StepLR(opt, step_size=${s.every}, gamma=${py(s.factor)})`;
    case 'multistep':
      return `S.MultiStepLR(opt, milestones=${JSON.stringify(s.milestones)}, gamma=${py(s.factor)})`;
    case 'factor':
      return `S.ConstantLR(opt, factor=${py(s.factor)}, total_iters=${s.steps})`;
    case 'exponential':
      return `S.ExponentialLR(opt, gamma=${py(s.gamma)})`;
    case 'polynomial':
      return `S.PolynomialLR(opt, total_iters=${s.steps}, power=${py(s.power)})`;
    case 'cosine':
      // torch's eta_min is one number for all groups, and its cosine rises again after T_max:
      // held at the floor by a ConstantLR from T_max on
      if (s.floor !== 0 && !uniform) return undefined;
      return `S.SequentialLR(opt, [S.CosineAnnealingLR(opt, T_max=${s.steps}, eta_min=${py(s.floor * lr)}), S.ConstantLR(opt, factor=${py(s.floor)}, total_iters=10**12)], milestones=[${s.steps}])`;
    case 'restarts':
      if (s.floor !== 0 && !uniform) return undefined;
      return `S.CosineAnnealingWarmRestarts(opt, T_0=${s.period}, T_mult=${s.growth}, eta_min=${py(s.floor * lr)})`;
    case 'constant':
    case 'inverse-time':
    case 'sequence' as never:
      return undefined;
    default: {
      const never: never = s;
      throw new Error(`unknown schedule ${JSON.stringify(never)}`);
    }
  }
}

/** Multiplicative torch schedulers, which ChainedScheduler composes with a warm-up as a product. */
const MULTIPLICATIVE: ReadonlySet<ScheduleSetup['kind']> = new Set(['step', 'multistep', 'factor', 'exponential', 'polynomial']);

const lambdaOf = (expr: string, why: string): string[] => [`# ${why}`, `schedulers = [S.LambdaLR(opt, lambda t: ${expr})]`];

/**
 * The schedule code of a recipe.
 * @param groupLrs the base learning rate of every parameter group (lr × the layer's lrScale)
 */
export function scheduleCode(recipe: Recipe, groupLrs: readonly number[]): ScheduleCode {
  const s = recipe.schedule;
  const w = recipe.warmup;
  const uniform = groupLrs.every((x) => x === groupLrs[0]);
  const warmExpr = `min(1.0, (t + 1) / ${w})`;
  const warm = w > 1 ? `S.LinearLR(opt, start_factor=${py(1 / w)}, end_factor=1.0, total_iters=${w - 1})` : undefined;
  const stepAll = ['for s in schedulers:', '    s.step()'];
  switch (s.kind) {
    case 'constant':
      return warm ? { build: ['# linear warm-up: factor (t + 1)/W, then 1', `schedulers = [${warm}]`], advance: stepAll } : { build: ['schedulers = []'], advance: ['pass'] };
    case 'plateau': {
      const minLr = groupLrs.map((g) => py(s.floor * g));
      const plateau = `S.ReduceLROnPlateau(opt, mode="min", factor=${py(s.factor)}, patience=${s.patience}, threshold=${py(s.threshold)}, threshold_mode="${s.thresholdMode}", cooldown=${s.cooldown}, min_lr=[${minLr.join(', ')}], eps=0.0)`;
      const build = ['# reduce-on-plateau watches the full-batch loss after every update (eps 0: every reduction applies)'];
      if (warm) build.push(`warmup = ${warm}`);
      build.push(`plateau = ${plateau}`, `schedulers = [${warm ? 'warmup, ' : ''}plateau]`);
      return { build, advance: [...(warm ? ['warmup.step()'] : []), 'plateau.step(loss)'] };
    }
    case 'onecycle': {
      const maxLr = groupLrs.map(py);
      const cls = `S.OneCycleLR(opt, max_lr=[${maxLr.join(', ')}], total_steps=${s.steps}, pct_start=${py(s.peak)}, anneal_strategy="${s.anneal}", div_factor=${py(s.divisor)}, final_div_factor=${py(s.finalDivisor)}, three_phase=${s.threePhase ? 'True' : 'False'}, cycle_momentum=False)`;
      return {
        build: ['# momentum is not cycled (Stepwell cycles the rate only)', `schedulers = [${cls}]`],
        advance: ['# OneCycleLR refuses to step past its cycle; the final rate is held from update total_steps - 1 on', `if schedulers[0].last_epoch < ${s.steps - 1}:`, '    schedulers[0].step()'],
      };
    }
    case 'sequence': {
      if (warm) return { build: lambdaOf(`${warmExpr} * (${factorExpr(s)})`, 'warm-up × a sequence of schedules, written out (torch cannot chain a warm-up with SequentialLR exactly)'), advance: stepAll };
      const phases = s.phases.map((p) => {
        const cls = p.kind === 'cosine' ? undefined : torchClass(p, recipe.lr, uniform);
        return cls ?? `S.LambdaLR(opt, lambda t: ${factorExpr(p)})`;
      });
      return { build: [`schedulers = [S.SequentialLR(opt, [${phases.join(', ')}], milestones=${JSON.stringify(s.milestones)})]`], advance: stepAll };
    }
    default: {
      const cls = torchClass(s, recipe.lr, uniform);
      if (!warm) {
        if (cls !== undefined) return { build: [`schedulers = [${cls}]`], advance: stepAll };
        return { build: lambdaOf(factorExpr(s), 'Stepwell\'s multiplier written out (no torch scheduler computes it for these parameter groups)'), advance: stepAll };
      }
      if (cls !== undefined && MULTIPLICATIVE.has(s.kind)) {
        return { build: ['# warm-up × schedule: ChainedScheduler multiplies the two rates', `schedulers = [S.ChainedScheduler([${warm}, ${cls}])]`], advance: stepAll };
      }
      return { build: lambdaOf(`${warmExpr} * (${factorExpr(s)})`, 'warm-up × schedule written out (the torch classes would not multiply exactly here)'), advance: stepAll };
    }
  }
}

/** Python helper for cosine warm restarts, emitted when a LambdaLR needs it. */
export const RESTART_HELPER = [
  'def restart_cosine(t, period, growth, floor):',
  '    """Cosine with warm restarts (CosineAnnealingWarmRestarts): periods period, period*growth, ..."""',
  '    length = period',
  '    while t >= length:',
  '        t -= length',
  '        length *= growth',
  '    return floor + (1.0 - floor) * 0.5 * (1.0 + math.cos(math.pi * t / length))',
];
