/**
 * The part of an exported PyTorch script that puts the optimizer and the schedules where a branch
 * forked at a later step has them, from the session state the ledger stored at the fork:
 *
 * - first-order optimizers: torch.optim's per-parameter state (`exp_avg`, `momentum_buffer`, …)
 *   sliced from Stepwell's flat buffers in the order of `model.parameters()` (Stepwell's layout);
 * - L-BFGS: torch.optim.LBFGS keeps one state for all parameters under its first parameter
 *   (`opt.state[opt._params[0]]`, PyTorch 2.13 `torch/optim/lbfgs.py`): `n_iter` (Stepwell's t),
 *   `d` (dir), `t` (stepLength), `old_dirs` (the y pairs, oldest first), `old_stps` (the s pairs),
 *   `ro` (1/yᵀs), `H_diag`, `prev_flat_grad`;
 * - reduce-on-plateau: `best`, `num_bad_epochs`, `cooldown_counter` and `last_epoch` of
 *   `ReduceLROnPlateau` (PyTorch 2.13 `torch/optim/lr_scheduler.py`), and each group's lr times
 *   the multiplier Stepwell's plateau state holds;
 * - every other schedule: advanced once per update up to the fork step.
 */
import type { Recipe } from '../../core/setup';
import type { OptimizerState, SessionState } from '../../core/state';
import { py, pyFloats, pyString } from './py-text';

/** torch.optim state keys per Stepwell buffer, for each first-order family a started script resumes. */
const TORCH_STATE: Partial<Record<Recipe['optimizer'], [torchKey: string, buffer: string][]>> = {
  sgd: [['momentum_buffer', 'velocity']],
  adam: [['exp_avg', 'm'], ['exp_avg_sq', 'v'], ['max_exp_avg_sq', 'vMax']],
  adamw: [['exp_avg', 'm'], ['exp_avg_sq', 'v'], ['max_exp_avg_sq', 'vMax']],
  rmsprop: [['square_avg', 'squareAvg'], ['grad_avg', 'gradAvg'], ['momentum_buffer', 'momentum']],
  adagrad: [['sum', 'sum']],
};

/** True when a branch forked after step 0 with this optimizer can be exported. */
export function resumable(optimizer: Recipe['optimizer']): boolean {
  return optimizer === 'lbfgs' || TORCH_STATE[optimizer] !== undefined;
}

/** A Python float literal that also writes ±∞ (`math.inf`), as a plateau's `best` starts. */
function pyNumber(x: number): string {
  if (x === Infinity) return 'math.inf';
  if (x === -Infinity) return '-math.inf';
  return py(x);
}

/** First-order optimizers: torch's per-parameter state from Stepwell's flat buffers. */
function firstOrderState(r: Recipe, o: OptimizerState): string[] {
  const keys = TORCH_STATE[r.optimizer] ?? [];
  const present = keys.filter(([, b]) => o.buffers[b] !== undefined);
  // SGD keeps no update count in torch: its buffer exists from the first update on.
  const withStep = r.optimizer !== 'sgd';
  if (o.t > 0 && present.length > 0) {
    return [
      'OPT_BUFFERS = {',
      ...present.map(([, b]) => `    ${pyString(b)}: torch.tensor(${pyFloats(o.buffers[b], '    ')}),`),
      '}',
      'at = 0',
      'for p in model.parameters():',
      '    n = p.numel()',
      `    opt.state[p] = {${[...(withStep ? [`"step": torch.tensor(${py(o.t)})`] : []), ...present.map(([k, b]) => `${pyString(k)}: OPT_BUFFERS[${pyString(b)}][at:at + n].reshape(p.shape).clone()`)].join(', ')}}`,
      '    at += n',
    ];
  }
  if (o.t > 0 && withStep) return ['for p in model.parameters():', `    opt.state[p] = {"step": torch.tensor(${py(o.t)})}`];
  return [];
}

/**
 * L-BFGS: the curvature pairs of Stepwell's ring buffer (slots start, start+1, … mod history,
 * oldest first — the order torch's lists keep), the last direction and step length, H₀'s scale
 * and the previous gradient. With t = 0 (no iteration yet, or a history cleared at the fork)
 * torch starts afresh at its first iteration, as Stepwell does.
 */
function lbfgsState(r: Recipe, o: OptimizerState): string[] {
  const P = o.buffers.prevGrad.length;
  const count = o.scalars.count;
  const start = o.scalars.start;
  const m = r.history;
  if (o.t === 0) return ['# L-BFGS has made no iteration on this branch yet: torch starts from steepest descent, as Stepwell does', 'opt.state[opt._params[0]].update({"func_evals": 0, "n_iter": 0})'];
  const slots = Array.from({ length: count }, (_, k) => (start + k) % m);
  const pairs = (name: 'y' | 's'): Float64Array => {
    const out = new Float64Array(count * P);
    slots.forEach((slot, k) => out.set(o.buffers[name].subarray(slot * P, (slot + 1) * P), k * P));
    return out;
  };
  return [
    `# L-BFGS memory (${count} of ${m} curvature pairs, oldest first): torch keeps it under the first parameter`,
    `LBFGS_Y = torch.tensor(${pyFloats(pairs('y'), '')}).reshape(${count}, ${P})`,
    `LBFGS_S = torch.tensor(${pyFloats(pairs('s'), '')}).reshape(${count}, ${P})`,
    `LBFGS_RHO = ${pyFloats(slots.map((s) => o.buffers.rho[s]), '')}`,
    'opt.state[opt._params[0]].update({',
    '    "func_evals": 0,',
    `    "n_iter": ${o.t},`,
    `    "d": torch.tensor(${pyFloats(o.buffers.dir, '    ')}),`,
    `    "t": ${py(o.scalars.stepLength)},`,
    `    "old_dirs": [LBFGS_Y[i].clone() for i in range(${count})],`,
    `    "old_stps": [LBFGS_S[i].clone() for i in range(${count})],`,
    '    "ro": [torch.tensor(x) for x in LBFGS_RHO],',
    `    "H_diag": torch.tensor(${py(o.scalars.hDiag)}),`,
    `    "prev_flat_grad": torch.tensor(${pyFloats(o.buffers.prevGrad, '    ')}),`,
    '    "prev_loss": None,',
    '})',
  ];
}

/** Reduce-on-plateau: its counters and the reduced rates; a warm-up before it is advanced alone. */
function plateauState(r: Recipe, o: OptimizerState, step: number): string[] {
  const sc = o.scalars;
  const factor = sc['plateau.factor'] ?? 1;
  return [
    ...(r.warmup > 1
      ? ['# the warm-up as it stands after START_STEP updates', 'with warnings.catch_warnings():', '    warnings.simplefilter("ignore")', '    for _ in range(START_STEP):', '        warmup.step()']
      : []),
    `# reduce-on-plateau's counters at step ${step}, and the rates it had reduced by then (× ${py(factor)})`,
    `plateau.best = ${pyNumber(sc['plateau.best'] ?? Infinity)}`,
    `plateau.num_bad_epochs = ${sc['plateau.bad'] ?? 0}`,
    `plateau.cooldown_counter = ${sc['plateau.cooldown'] ?? 0}`,
    'plateau.last_epoch = START_STEP',
    'for g in opt.param_groups:',
    `    g["lr"] = g["lr"] * ${py(factor)}`,
    'plateau._last_lr = [g["lr"] for g in opt.param_groups]',
  ];
}

/**
 * Lines that put the optimizer, the schedules and the step count where a branch forked at
 * `start.step` has them (module comment). Runs after `opt` and the schedulers exist.
 */
export function startCode(r: Recipe, start: { step: number; state: SessionState }): string[] {
  const o = start.state.optimizer;
  if (!resumable(r.optimizer)) throw new Error(`a branch forked at step ${start.step} continues ${r.optimizer}'s state, which no torch.optim class takes`);
  return [
    `# ---- the state at step ${start.step}, where this branch was forked: optimizer state (Stepwell's flat layout), update count, schedules`,
    `START_STEP = ${start.step}`,
    ...(r.optimizer === 'lbfgs' ? lbfgsState(r, o) : firstOrderState(r, o)),
    ...(r.schedule.kind === 'plateau'
      ? plateauState(r, o, start.step)
      : [
          '# the schedules as they stand after START_STEP updates (torch warns when a scheduler steps before the optimizer; here it must)',
          'with warnings.catch_warnings():',
          '    warnings.simplefilter("ignore")',
          '    for _ in range(START_STEP):',
          '        advance_schedules(None)',
        ]),
  ];
}
