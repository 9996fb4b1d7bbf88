/**
 * One-line, human-readable descriptions of a recipe and a setup for status lines and the
 * static summary that viewers without Stepwell show.
 */
import type { Recipe, ScheduleSetup, Setup } from '../core/setup';

/** Shortest round-trip text of a number, e.g. `0.05`, `1e-8`. */
export function num(x: number): string {
  return String(x);
}

function schedule(s: ScheduleSetup): string {
  switch (s.kind) {
    case 'constant':
      return '';
    case 'step':
      return `, ×${num(s.factor)} every ${s.every} steps`;
    case 'exponential':
      return `, exponential γ=${num(s.gamma)}`;
    case 'inverse-time':
      return `, inverse-time decay ${num(s.decay)}`;
    case 'cosine':
      return `, cosine over ${s.steps} steps to ${num(s.floor)}`;
    case 'multistep':
      return `, ×${num(s.factor)} at steps ${s.milestones.join(', ')}`;
    case 'factor':
      return `, ×${num(s.factor)} for ${s.steps} steps`;
    case 'polynomial':
      return `, polynomial power ${num(s.power)} over ${s.steps} steps`;
    case 'restarts':
      return `, cosine restarts every ${s.period}${s.growth !== 1 ? `×${s.growth}` : ''} steps to ${num(s.floor)}`;
    case 'onecycle':
      return `, one cycle over ${s.steps} steps`;
    case 'plateau':
      return `, ×${num(s.factor)} after ${s.patience} steps without progress`;
    case 'sequence':
      return `, ${s.phases.map((p, i) => `${i === 0 ? 'from 0' : `from ${s.milestones[i - 1]}`}${schedule(p) || ', constant'}`).join(';')}`;
  }
}

/**
 * Describes the recipe: optimizer, step size and the options that differ from plain use.
 *
 * @example `sgd η=0.05 μ=0.9 nesterov, batch 32, warm-up 10`
 */
export function describeRecipe(r: Recipe): string {
  const parts: string[] = [`${r.optimizer} η=${num(r.lr)}`];
  switch (r.optimizer) {
    case 'sgd':
      if (r.momentum !== 0) parts.push(`μ=${num(r.momentum)}`);
      if (r.nesterov) parts.push('nesterov');
      break;
    case 'adam':
    case 'adamw':
      parts.push(`β=(${num(r.beta1)}, ${num(r.beta2)})`);
      if (r.amsgrad) parts.push('amsgrad');
      break;
    case 'rmsprop':
      parts.push(`α=${num(r.alpha)}`);
      if (r.centered) parts.push('centered');
      break;
    case 'lbfgs':
    case 'minibatch-lbfgs':
      parts.push(`m=${r.history}`, r.lineSearch);
      break;
    case 'cg':
      parts.push(r.cgVariant, r.lineSearch);
      break;
    case 'newton':
    case 'gauss-newton':
      parts.push(`damping ${num(r.damping)}`);
      break;
    case 'adagrad':
      break;
  }
  if (r.weightDecay !== 0) parts.push(`weight decay ${num(r.weightDecay)}`);
  let text = parts.join(' ');
  text += r.batch === 'full' ? ', full batch' : `, batch ${r.batch}`;
  if (r.warmup > 0) text += `, warm-up ${r.warmup}`;
  if (r.clipNorm > 0) text += `, clip ‖g‖ ≤ ${num(r.clipNorm)}`;
  return text + schedule(r.schedule);
}

/**
 * Describes the setup: model shape, loss and data size.
 *
 * @example `network 3→16 tanh→1 linear, mse, 120 rows (+30 held out)`
 */
export function describeSetup(s: Setup): string {
  const m = s.model;
  switch (m.kind) {
    case 'network': {
      const layers = m.layers.map(l => `${l.units} ${l.expression ? `f(x) = ${l.expression.expr}` : l.activation}`).join('→');
      let text = `network ${m.inputs}→${layers}, ${s.lossExpression ? `loss ${s.lossExpression.expr}` : s.loss}`;
      if (s.data !== undefined) {
        text += `, ${s.data.rows} rows`;
        if (s.data.heldOut !== undefined) text += ` (+${s.data.heldOut.rows} held out)`;
      }
      if (s.l2 !== 0) text += `, l2 ${num(s.l2)}`;
      return text;
    }
    case 'quadratic':
      return `quadratic in ${m.center.length} dimensions`;
    case 'rosenbrock':
      return 'Rosenbrock function';
  }
}
