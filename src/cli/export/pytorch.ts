/**
 * A Stepwell experiment as a self-contained PyTorch script (float64): the same network
 * (nn.Sequential of nn.Linear and activation modules), the same data (the spec's files, checked
 * by SHA-256, or the inline rows), loss and reduction, optimizer with parameter groups, schedule
 * chain, clipping, mini-batch order (a port of Stepwell's generator) and initial weights
 * (embedded). Contract: `python train.py --steps N --json` prints {"losses": [...]}, the
 * full-batch loss after k updates for k = 0..N — what `stepwell run SPEC --steps N --json`
 * reports as trajectory[k].loss (checked by test/export/roundtrip.test.ts with PyPI torch).
 */
import { activationClass, lossClass } from './py-expression';
import type { Experiment, NetworkModel, Recipe } from '../../core/setup';
import type { SessionState } from '../../core/state';
import { effectiveBatch } from '../../core/session/adapt';
import { batchOrderCode, dataCode, dataHelpers } from './py-data';
import { RESTART_HELPER, scheduleCode } from './py-schedule';
import { resumable, startCode } from './py-start';
import { py, pyFloats, pyString } from './py-text';

/** What the script's header states about where it came from. */
export interface ExportSource {
  /** Stepwell's version (package.json). */
  version: string;
  /** The spec file and the patch applied (`--set`), as the user wrote them. */
  spec: string;
  patch: string;
  /** Fingerprint of the session state at step 0 (weights, optimizer state, generator, step). */
  fingerprint: string;
  /** Folder of the data files relative to where the script is saved. */
  dataDir: string;
  /** The generator state of Stepwell's batch order (fork 'batches' of the seed). */
  batchState: readonly number[];
  /** Initial parameters in Stepwell's flat layout. */
  initial: Float64Array;
  /**
   * Where the script starts when not at step 0 (a branch forked later): the step and the whole
   * session state there — the weights (`initial` holds them too), the optimizer's buffers and
   * update count, the batch generator and the epoch's row order.
   */
  start?: { step: number; state: SessionState; replayed?: boolean };
}

/** An experiment that cannot be written as a PyTorch script, with the reason. */
export class NotExportable extends Error {}

function activationModule(m: NetworkModel, k: number): string {
  const l = m.layers[k];
  const p = l.params ?? {};
  switch (l.activation) {
    case 'linear': return 'nn.Identity()';
    case 'tanh': return 'nn.Tanh()';
    case 'sigmoid': return 'nn.Sigmoid()';
    case 'relu': return 'nn.ReLU()';
    case 'leaky-relu': return `nn.LeakyReLU(negative_slope=${py(p.slope ?? 0.01)})`;
    case 'softplus': return `nn.Softplus(beta=${py(p.beta ?? 1)}, threshold=${py(p.threshold ?? 20)})`;
    case 'elu': return `nn.ELU(alpha=${py(p.alpha ?? 1)})`;
    case 'gelu': return 'nn.GELU()';
    case 'expression': return `OwnActivation${k}()`;
    default: {
      const never: never = l.activation;
      throw new NotExportable(`unknown activation ${String(never)}`);
    }
  }
}

/** The torch.optim constructor call for a recipe over `params` (a Python expression). */
function optimizerCall(r: Recipe, params: string, grouped: boolean): string {
  const wd = grouped ? '' : `, weight_decay=${py(r.weightDecay)}`;
  switch (r.optimizer) {
    case 'sgd':
      return `torch.optim.SGD(${params}, lr=${py(r.lr)}, momentum=${py(r.momentum)}, dampening=${py(r.dampening)}, nesterov=${r.nesterov ? 'True' : 'False'}${wd})`;
    case 'adagrad':
      return `torch.optim.Adagrad(${params}, lr=${py(r.lr)}, lr_decay=${py(r.lrDecay)}, initial_accumulator_value=${py(r.initialAccumulator)}, eps=${py(r.eps)}${wd})`;
    case 'rmsprop':
      return `torch.optim.RMSprop(${params}, lr=${py(r.lr)}, alpha=${py(r.alpha)}, eps=${py(r.eps)}, momentum=${py(r.momentum)}, centered=${r.centered ? 'True' : 'False'}${wd})`;
    case 'adam':
    case 'adamw':
      return `torch.optim.${r.optimizer === 'adam' ? 'Adam' : 'AdamW'}(${params}, lr=${py(r.lr)}, betas=(${py(r.beta1)}, ${py(r.beta2)}), eps=${py(r.eps)}, amsgrad=${r.amsgrad ? 'True' : 'False'}${wd})`;
    case 'lbfgs': {
      if (r.lineSearch === 'brent') throw new NotExportable("recipe.lineSearch 'brent' has no torch.optim.LBFGS counterpart (torch offers strong_wolfe or none)");
      const ls = r.lineSearch === 'strong-wolfe' ? '"strong_wolfe"' : 'None';
      return `torch.optim.LBFGS(${params}, lr=${py(r.lr)}, max_iter=${r.maxIter}, max_eval=${r.maxEval}, tolerance_grad=${py(r.toleranceGrad)}, tolerance_change=${py(r.toleranceChange)}, history_size=${r.history}, line_search_fn=${ls})`;
    }
    case 'cg':
    case 'newton':
    case 'gauss-newton':
    case 'minibatch-lbfgs':
      throw new NotExportable(`recipe.optimizer '${r.optimizer}' has no torch.optim counterpart, so it cannot be exported; sgd, adagrad, rmsprop, adam, adamw and lbfgs can`);
    default: {
      const never: never = r.optimizer;
      throw new NotExportable(`unknown optimizer ${String(never)}`);
    }
  }
}

/** The script text (see the module comment). */
export function pytorchScript(e: Experiment, src: ExportSource): string {
  const m = e.setup.model;
  const data = e.setup.data;
  if (m.kind !== 'network' || data === undefined) throw new NotExportable(`the ${m.kind} objective is not a network, so there is no PyTorch model to export`);
  const r = e.recipe;
  const lbfgs = r.optimizer === 'lbfgs';
  const batch = effectiveBatch(r, data.rows);
  const L = m.layers.length;
  const scales = r.layers.length === L ? r.layers.map((l) => l.lrScale) : m.layers.map(() => 1);
  const grouped = !lbfgs && (scales.some((s) => s !== 1) || (!r.decayBiases && r.weightDecay !== 0));
  const groupLrs = grouped ? scales.flatMap((s) => [r.lr * s, r.lr * s]) : [r.lr];
  const sched = scheduleCode(r, groupLrs);
  const usesRestarts = sched.build.some((l) => l.includes('restart_cosine('));
  const origin = data.origin;

  // initial weights, by the state_dict names of the Sequential (Linear k at index 2k)
  let fanIn = m.inputs;
  let at = 0;
  const state: string[] = [];
  m.layers.forEach((l, k) => {
    const w = src.initial.subarray(at, at + l.units * fanIn);
    at += l.units * fanIn;
    const b = src.initial.subarray(at, at + l.units);
    at += l.units;
    state.push(`    "${2 * k}.weight": torch.tensor(${pyFloats(w, '    ')}).reshape(${l.units}, ${fanIn}),`);
    state.push(`    "${2 * k}.bias": torch.tensor(${pyFloats(b, '    ')}),`);
    fanIn = l.units;
  });

  const modules: string[] = [];
  fanIn = m.inputs;
  m.layers.forEach((l, k) => {
    modules.push(`    nn.Linear(${fanIn}, ${l.units}), ${activationModule(m, k)},`);
    fanIn = l.units;
  });

  const ownLoss = e.setup.loss === 'expression' && e.setup.lossExpression ? e.setup.lossExpression : null;
  const own = [...m.layers.flatMap((l, k) => (l.expression ? [...activationClass(k, l.expression), '', ''] : [])), ...(ownLoss ? [...lossClass(ownLoss), '', ''] : [])];
  const lossExpr = ownLoss ? 'OwnLoss.apply(out, y)' : e.setup.loss === 'mse' ? 'F.mse_loss(out, y)' : e.setup.loss === 'cross-entropy' ? 'F.cross_entropy(out, y)' : 'F.binary_cross_entropy_with_logits(out, y)';
  const l2 = e.setup.l2 !== 0 ? ` + ${py(0.5 * e.setup.l2)} * sum((model[2 * k].weight ** 2).sum() for k in range(${L}))` : '';

  const params: string[] = [];
  if (grouped) {
    params.push('# parameter groups: per-layer rates (lr × lrScale)' + (!r.decayBiases && r.weightDecay !== 0 ? ', no weight decay on biases' : ''));
    params.push('groups = []');
    params.push(`for k, scale in enumerate(${JSON.stringify(scales.map((s) => Number(py(s))))}):`);
    params.push(`    groups.append({"params": [model[2 * k].weight], "lr": ${py(r.lr)} * scale, "weight_decay": ${py(r.weightDecay)}})`);
    params.push(`    groups.append({"params": [model[2 * k].bias], "lr": ${py(r.lr)} * scale, "weight_decay": ${py(r.decayBiases ? r.weightDecay : 0)}})`);
    params.push(`opt = ${optimizerCall(r, 'groups', true)}`);
  } else {
    params.push(`opt = ${optimizerCall(r, 'model.parameters()', false)}`);
  }

  const decayed = lbfgs && r.weightDecay !== 0
    ? ` + ${py(0.5 * r.weightDecay)} * sum((p ** 2).sum() for p in ${r.decayBiases ? 'model.parameters()' : `(model[2 * k].weight for k in range(${L}))`})`
    : '';
  const clipping: string[] = [];
  if (!lbfgs && r.clipValue > 0) clipping.push(`        torch.nn.utils.clip_grad_value_(model.parameters(), ${py(r.clipValue)})`);
  if (!lbfgs && r.clipNorm > 0) clipping.push(`        torch.nn.utils.clip_grad_norm_(model.parameters(), max_norm=${py(r.clipNorm)})`);
  const rowsExpr = batch > 0 ? 'BATCHES.next()' : 'None';
  const start = src.start !== undefined && src.start.step > 0 ? src.start : undefined;
  if (start !== undefined && !resumable(r.optimizer)) throw new NotExportable(`a branch forked at step ${start.step} continues ${r.optimizer}'s state, which no torch.optim class takes; fork it at step 0 to export it`);
  const resume = start !== undefined && batch > 0 && start.state.order !== null ? { cursor: start.state.cursor, order: start.state.order } : undefined;
  const batchState = start !== undefined && batch > 0 ? start.state.rng.s : src.batchState;
  const heldOut = data.heldOut !== undefined;

  const header = [
    '#!/usr/bin/env python3',
    `# Exported by Stepwell ${src.version} from ${src.spec}${src.patch ? ` with ${src.patch}` : ''}.`,
    ...(start !== undefined
      ? [`# Starts at step ${start.step}, where the branch was forked, from the state ${start.replayed === true ? 'of the trunk run from the spec to that step' : 'the ledger stored there'}; fingerprint: ${src.fingerprint}`]
      : [`# Initial state fingerprint (step 0): ${src.fingerprint}`]),
    ...(origin ? [`# Data hash: ${origin.hash}`] : []),
    '#',
    `# python ${'train.py'} --steps N --json prints {"losses": [...]${heldOut ? ', "heldOut": [...]' : ''}}: the full-batch loss${heldOut ? ' (and the held-out loss)' : ''} after k updates,`,
    start !== undefined
      ? `# k = 0..N counted from step ${start.step}: the branch's records ${start.step}..${start.step}+N (float64, CPU).`
      : '# k = 0..N, the numbers `stepwell run SPEC --steps N --json` reports (float64, CPU).',
    '# A small proxy: confirm what it shows at full scale.',
    '"""PyTorch recipe exported by Stepwell (see the header)."""',
    'import argparse',
    'import csv',
    'import hashlib',
    'import io',
    'import json',
    'import math',
    'import os',
    'import sys',
    'import warnings',
    '',
    'import numpy as np',
    'import torch',
    'import torch.nn as nn',
    'import torch.nn.functional as F',
    'from torch.optim import lr_scheduler as S',
    '',
    'torch.set_default_dtype(torch.float64)',
    'torch.set_num_threads(1)',
    '',
    'parser = argparse.ArgumentParser(description=__doc__)',
    'parser.add_argument("--steps", type=int, required=True, help="optimizer updates to run")',
    'parser.add_argument("--json", action="store_true", help="print {\\"losses\\": [...]} instead of a table")',
    `parser.add_argument("--data-dir", default=os.path.join(os.path.dirname(os.path.abspath(__file__)), ${pyString(src.dataDir)}), help="folder of the data files")`,
    'args = parser.parse_args()',
    'DATA_DIR = args.data_dir',
    '',
  ];
  const body = [
    ...(origin && origin.reading.format !== 'parquet' ? [...dataHelpers(origin.reading.format === 'csv'), '', ''] : []),
    ...(usesRestarts ? [...RESTART_HELPER, '', ''] : []),
    '# ---- data',
    ...dataCode(data, e.setup.loss, src.dataDir),
    '',
    ...(own.length > 0 ? ['# ---- the spec\'s own activations and loss: forward by the formula, backward by the derivative Stepwell used', ...own] : []),
    '# ---- model: Linear k sits at index 2k, its activation at 2k + 1',
    'model = nn.Sequential(',
    ...modules,
    ')',
    'model.load_state_dict({',
    ...state,
    '})',
    '',
    '',
    'def batch_loss(rows):',
    `    """Mean ${e.setup.loss} loss${l2 ? ' plus ½·l2·Σ‖W‖²' : ''} on the given rows (None = all)."""`,
    '    x, y = (X, Y) if rows is None else (X[rows], Y[rows])',
    '    out = model(x)',
    `    return ${lossExpr}${l2}`,
    '',
    '',
    'def full_loss():',
    '    with torch.no_grad():',
    '        return float(batch_loss(None))',
    '',
    '',
    ...(heldOut
      ? [
          'def held_out_loss():',
          '    # the same loss on the held-out rows (what Stepwell records as the held-out loss)',
          '    with torch.no_grad():',
          '        out = model(XH)',
          `        return float(${lossExpr.replace('(out, y)', '(out, YH)')}${l2})`,
          '',
          '',
        ]
      : []),
    '# ---- optimizer and schedule',
    ...params,
    ...sched.build,
    '',
    '',
    'def advance_schedules(loss):',
    ...sched.advance.map((l) => `    ${l}`),
    '',
    '',
    ...(start !== undefined ? [...startCode(r, start), '', ''] : []),
    ...(batch > 0 ? ['# ---- mini-batches', ...batchOrderCode(batchState, data.rows, batch, resume), '', ''] : []),
    '# ---- training: one optimizer update per step, full-batch loss after each',
    'losses = [full_loss()]',
    ...(heldOut ? ['held = [held_out_loss()]'] : []),
    'for step in range(args.steps):',
    `    rows = ${rowsExpr}`,
    ...(lbfgs
      ? [
          '',
          '    def closure():',
          '        opt.zero_grad()',
          `        loss = batch_loss(rows)${decayed}`,
          '        loss.backward()',
          '        return loss',
          '',
          '    opt.step(closure)',
        ]
      : ['    opt.zero_grad()', '    batch_loss(rows).backward()', ...clipping.map((l) => l.slice(4)), '    opt.step()']),
    '    losses.append(full_loss())',
    ...(heldOut ? ['    held.append(held_out_loss())'] : []),
    '    advance_schedules(losses[-1])',
    '',
    'if args.json:',
    `    print(json.dumps({"losses": losses${heldOut ? ', "heldOut": held' : ''}}))`,
    'else:',
    '    for k, loss in enumerate(losses):',
    '        print(f"{k:6d}  {loss:.10g}")',
  ];
  return [...header, ...body].join('\n') + '\n';
}
