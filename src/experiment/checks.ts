/**
 * Cross-field checks that a JSON schema cannot express: shapes that must agree between
 * model and data, class indices, symmetric matrices, optimizer-specific keys. Written
 * defensively: they run even when the schema already failed, and skip whatever the
 * schema reports, so the user sees every problem at once.
 */
import { activationExpression, lossExpression } from './expression';
import { formatPath } from './path';
import type { Path } from './path';

/** One cross-field problem (an error or a warning), before positions are attached. */
export interface CheckProblem {
  path: Path;
  message: string;
  atKey?: boolean;
  /** Offset inside the string value at `path` (an expression's column), when the problem is inside it. */
  within?: number;
}

/**
 * An expression problem said of its key: the reader's subject ("the derivative: unknown symbol …",
 * "the activation expression has bad syntax …") replaced by the path.
 */
function atKey(path: string, message: string): string {
  const rest = message.replace(/^(the activation expression|the loss expression|the derivative)(:\s*|\s+(?=has |is ))/, '');
  return /^(has|is) /.test(rest) ? `${path} ${rest}` : `${path}: ${rest}`;
}

/** Errors block the experiment; warnings flag legal but suspicious choices. */
export interface CheckReport {
  errors: CheckProblem[];
  warnings: CheckProblem[];
}

type Obj = Record<string, unknown>;

const isObj = (v: unknown): v is Obj => typeof v === 'object' && v !== null && !Array.isArray(v);
const isPosInt = (v: unknown): v is number => typeof v === 'number' && Number.isInteger(v) && v >= 1;
const isNum = (v: unknown): v is number => typeof v === 'number' && Number.isFinite(v);

/** Which optimizers use each optimizer-specific recipe key (others ignore it). */
export const KEY_USERS: Readonly<Record<string, readonly string[]>> = {
  momentum: ['sgd', 'rmsprop'],
  nesterov: ['sgd'],
  dampening: ['sgd'],
  lrDecay: ['adagrad'],
  initialAccumulator: ['adagrad'],
  maxIter: ['lbfgs'],
  maxEval: ['lbfgs'],
  toleranceGrad: ['lbfgs', 'minibatch-lbfgs'],
  toleranceChange: ['lbfgs', 'minibatch-lbfgs'],
  beta1: ['adam', 'adamw'],
  beta2: ['adam', 'adamw'],
  amsgrad: ['adam', 'adamw'],
  eps: ['adagrad', 'rmsprop', 'adam', 'adamw'],
  alpha: ['rmsprop'],
  centered: ['rmsprop'],
  weightDecay: ['sgd', 'adagrad', 'rmsprop', 'adam', 'adamw', 'lbfgs', 'cg', 'newton', 'gauss-newton', 'minibatch-lbfgs'],
  history: ['lbfgs', 'minibatch-lbfgs'],
  lineSearch: ['lbfgs', 'cg', 'newton', 'gauss-newton', 'minibatch-lbfgs'],
  cgVariant: ['cg'],
  damping: ['newton', 'gauss-newton'],
  innerSteps: ['minibatch-lbfgs'],
};

/** Target rows as a uniform list of lists, or the first entry that breaks uniformity. */
function targetRows(y: unknown[], at: Path, report: CheckReport): number[][] | undefined {
  const flat = typeof y[0] === 'number';
  const rows: number[][] = [];
  for (let i = 0; i < y.length; i++) {
    const r = y[i];
    if (flat && Array.isArray(r)) {
      report.errors.push({ path: [...at, i], message: `${formatPath([...at, i])} is a list, but ${formatPath([...at, 0])} is a number; write every target row the same way` });
      return undefined;
    }
    if (!flat && typeof r === 'number') {
      report.errors.push({ path: [...at, i], message: `${formatPath([...at, i])} is a number, but ${formatPath([...at, 0])} is a list; write every target row the same way` });
      return undefined;
    }
    if (typeof r === 'number') rows.push([r]);
    else if (Array.isArray(r)) rows.push(r as number[]);
    else return undefined; // reported by the schema
  }
  return rows;
}

/**
 * Row numbers as short ranges: `0–49`, `3, 7, 12–15`; past `limit` ranges the rest is counted
 * ("and 120 more rows"), so a message stays one line however many rows share the problem.
 */
export function rowRanges(rows: readonly number[], limit = 4): string {
  const ranges: [number, number][] = [];
  for (const r of rows) {
    const last = ranges[ranges.length - 1];
    if (last !== undefined && r === last[1] + 1) last[1] = r;
    else ranges.push([r, r]);
  }
  const shown = ranges.slice(0, limit).map(([a, z]) => (a === z ? String(a) : `${a}–${z}`));
  const rest = ranges.slice(limit).reduce((n, [a, z]) => n + z - a + 1, 0);
  return shown.join(', ') + (rest > 0 ? ` and ${rest} more` : '');
}

/**
 * Reports rows that share one problem as one error at the first such row: "data.x rows 0–49 have
 * 2 columns, but model.inputs is 3" instead of fifty identical lines. `groups` maps a group key
 * (e.g. the column count) to its row numbers, ascending.
 */
function reportRows(report: CheckReport, at: Path, groups: Map<string, number[]>, say: (key: string, plural: boolean) => string): void {
  for (const [key, rows] of groups) {
    const plural = rows.length > 1;
    const subject = plural ? `${formatPath(at)} rows ${rowRanges(rows)}` : formatPath([...at, rows[0]]);
    report.errors.push({ path: [...at, rows[0]], message: `${subject} ${say(key, plural)}` });
  }
}

/** `1 unit`, `3 units`. */
const units = (n: number | undefined): string => `${n} unit${n === 1 ? '' : 's'}`;

/** Adds row `i` to the group `key`. */
function addTo(groups: Map<string, number[]>, key: string, i: number): void {
  const list = groups.get(key);
  if (list === undefined) groups.set(key, [i]);
  else list.push(i);
}

/** Checks one x/y split (training or held-out) against the model's widths and the loss. */
function checkSplit(split: Obj, at: Path, inputs: number | undefined, outUnits: number | undefined, loss: string, report: CheckReport): number | undefined {
  const x = split.x;
  const y = split.y;
  let xRows: number | undefined;
  if (Array.isArray(x)) {
    xRows = x.length;
    if (inputs !== undefined) {
      const widths = new Map<string, number[]>();
      x.forEach((row, i) => {
        if (Array.isArray(row) && row.length !== inputs) addTo(widths, String(row.length), i);
      });
      reportRows(report, [...at, 'x'], widths, (w, plural) => `${plural ? 'have' : 'has'} ${w} column${w === '1' ? '' : 's'}, but model.inputs is ${inputs}`);
    }
  }
  if (!Array.isArray(y) || y.length === 0) return xRows;
  const rows = targetRows(y, [...at, 'y'], report);
  if (!rows) return xRows;
  if (xRows !== undefined && xRows > 0 && rows.length !== xRows)
    report.errors.push({ path: [...at, 'y'], message: `${formatPath([...at, 'y'])} has ${rows.length} rows, but ${formatPath([...at, 'x'])} has ${xRows}` });
  const flat = typeof y[0] === 'number';
  const cell = (i: number, j: number): Path => (flat ? [...at, 'y', i] : [...at, 'y', i, j]);
  if (loss === 'cross-entropy') {
    const counts = new Map<string, number[]>();
    rows.forEach((r, i) => {
      if (r.length !== 1) {
        addTo(counts, String(r.length), i);
        return;
      }
      const c = r[0];
      if (!isNum(c)) return;
      const range = outUnits !== undefined ? ` (an integer from 0 to ${outUnits - 1})` : ' (a non-negative integer)';
      if (!Number.isInteger(c) || c < 0 || (outUnits !== undefined && c >= outUnits))
        report.errors.push({ path: cell(i, 0), message: `${formatPath(cell(i, 0))} must be a class index${range}, got ${c}` });
    });
    reportRows(report, [...at, 'y'], counts, (n, plural) => `must hold one class index for cross-entropy, but ${plural ? 'hold' : 'holds'} ${n} values`);
    return xRows;
  }
  const widths = new Map<string, number[]>();
  rows.forEach((r, i) => {
    if (outUnits !== undefined && r.length !== outUnits) addTo(widths, String(r.length), i);
    if (loss === 'binary-cross-entropy') {
      r.forEach((v, j) => {
        if (isNum(v) && (v < 0 || v > 1))
          report.errors.push({ path: cell(i, j), message: `${formatPath(cell(i, j))} must be in [0, 1] for binary-cross-entropy, got ${v}` });
      });
    }
  });
  reportRows(report, [...at, 'y'], widths, (w, plural) =>
    flat ? `${plural ? 'are single values' : 'is a single value'}, but the last layer has ${units(outUnits)}` : `${plural ? 'have' : 'has'} ${w} columns, but the last layer has ${units(outUnits)}`);
  return xRows;
}

/** Checks explicit initial weights against the layer shapes. */
function checkWeights(weights: unknown[], layers: unknown[], inputs: number | undefined, report: CheckReport): void {
  if (weights.length !== layers.length)
    report.errors.push({ path: ['model', 'weights'], message: `model.weights has ${weights.length} entries, but model.layers has ${layers.length}; give one { weight, bias } per layer` });
  let fanIn = inputs;
  layers.forEach((layer, k) => {
    const units = isObj(layer) && isPosInt(layer.units) ? layer.units : undefined;
    const w = weights[k];
    if (isObj(w) && units !== undefined) {
      const at: Path = ['model', 'weights', k];
      if (Array.isArray(w.weight)) {
        if (w.weight.length !== units)
          report.errors.push({ path: [...at, 'weight'], message: `${formatPath([...at, 'weight'])} has ${w.weight.length} rows, but model.layers[${k}].units is ${units} (weight is [units][fan_in])` });
        if (fanIn !== undefined)
          w.weight.forEach((row, i) => {
            if (Array.isArray(row) && row.length !== fanIn)
              report.errors.push({ path: [...at, 'weight', i], message: `${formatPath([...at, 'weight', i])} has ${row.length} columns, but the layer's fan-in is ${fanIn}` });
          });
      }
      if (Array.isArray(w.bias) && w.bias.length !== units)
        report.errors.push({ path: [...at, 'bias'], message: `${formatPath([...at, 'bias'])} has ${w.bias.length} entries, but model.layers[${k}].units is ${units}` });
    }
    fanIn = units;
  });
}

function checkNetwork(spec: Obj, model: Obj, report: CheckReport): void {
  const inputs = isPosInt(model.inputs) ? model.inputs : undefined;
  const layers = Array.isArray(model.layers) ? model.layers : [];
  const last = layers[layers.length - 1];
  const outUnits = isObj(last) && isPosInt(last.units) ? last.units : undefined;
  const loss = typeof spec.loss === 'string' ? spec.loss : 'mse';
  if (Array.isArray(model.weights) || isObj(model.weights)) {
    if (Array.isArray(model.weights)) checkWeights(model.weights, layers, inputs, report);
    for (const key of ['init', 'gain'])
      if (model[key] !== undefined)
        report.warnings.push({ path: ['model', key], atKey: true, message: `model.${key} is ignored because model.weights gives the initial parameters` });
  }
  const PARAM_OF: Record<string, string> = { slope: 'leaky-relu', alpha: 'elu', beta: 'softplus', threshold: 'softplus' };
  layers.forEach((layer, k) => {
    if (!isObj(layer)) return;
    if (isObj(layer.activation) && typeof layer.activation.expr === 'string') {
      const d = layer.activation.derivative;
      const read = activationExpression(layer.activation.expr, typeof d === 'string' ? d : undefined);
      if (!read.ok)
        report.errors.push({ path: ['model', 'layers', k, 'activation', read.key], within: read.problem.at, message: atKey(`model.layers[${k}].activation.${read.key}`, read.problem.message) });
    }
    const act = typeof layer.activation === 'string' ? layer.activation : isObj(layer.activation) ? 'expression' : 'linear';
    for (const [key, owner] of Object.entries(PARAM_OF))
      if (layer[key] !== undefined && act !== owner)
        report.warnings.push({ path: ['model', 'layers', k, key], atKey: true, message: `model.layers[${k}].${key} applies to ${owner}, not to ${act}, so it has no effect` });
  });
  if (loss === 'cross-entropy' && isObj(last)) {
    if (outUnits === 1)
      report.errors.push({ path: ['model', 'layers', layers.length - 1, 'units'], message: `cross-entropy needs at least 2 units in the last layer (one logit per class), got 1; use binary-cross-entropy for two classes with one unit` });
    const act = typeof last.activation === 'string' ? last.activation : 'linear';
    if (act !== 'linear')
      report.warnings.push({ path: ['model', 'layers', layers.length - 1, 'activation'], message: `cross-entropy applies softmax itself; a final ${act} squashes the logits` });
  }
  if (loss === 'binary-cross-entropy' && isObj(last) && typeof last.activation === 'string' && last.activation !== 'linear')
    report.warnings.push({ path: ['model', 'layers', layers.length - 1, 'activation'], message: `binary-cross-entropy takes logits and applies the sigmoid itself; a final ${last.activation} squashes the logits` });
  let rows: number | undefined;
  if (spec.data === undefined) {
    report.errors.push({ path: ['data'], atKey: true, message: 'data is required for a network model: give data.x and data.y, or data.file' });
  } else if (isObj(spec.data)) {
    rows = checkSplit(spec.data, ['data'], inputs, outUnits, loss, report);
    if (isObj(spec.data.heldOut)) checkSplit(spec.data.heldOut, ['data', 'heldOut'], inputs, outUnits, loss, report);
  }
  const recipe = isObj(spec.recipe) ? spec.recipe : {};
  if (Array.isArray(recipe.layers) && recipe.layers.length !== layers.length && layers.length > 0)
    report.errors.push({ path: ['recipe', 'layers'], message: `recipe.layers has ${recipe.layers.length} entries, but model.layers has ${layers.length}; give one { lrScale } per layer` });
  if (rows !== undefined && rows > 0) {
    for (const key of ['batch', 'curvatureBatch'] as const) {
      const b = recipe[key];
      if (isPosInt(b) && b > rows)
        report.errors.push({ path: ['recipe', key], message: `recipe.${key} is ${b}, but the data has only ${rows} rows` });
    }
  }
}

function checkObjective(spec: Obj, model: Obj, report: CheckReport): void {
  const name = String(model.objective);
  if (name !== 'quadratic' && name !== 'rosenbrock') return;
  let n = 2;
  if (name === 'quadratic' && Array.isArray(model.matrix)) {
    const a = model.matrix as unknown[];
    n = a.length;
    let square = true;
    a.forEach((row, i) => {
      if (Array.isArray(row) && row.length !== n) {
        square = false;
        report.errors.push({ path: ['model', 'matrix', i], message: `model.matrix[${i}] has ${row.length} columns, but the matrix has ${n} rows; it must be square` });
      }
    });
    const rows = a.filter(Array.isArray) as unknown[][];
    if (square && rows.length === n && rows.every((r) => r.every(isNum))) {
      const m = rows as number[][];
      let scale = 0;
      for (const r of m) for (const v of r) scale = Math.max(scale, Math.abs(v));
      outer: for (let i = 0; i < n; i++)
        for (let j = i + 1; j < n; j++)
          if (Math.abs(m[i][j] - m[j][i]) > 1e-12 * scale) {
            report.errors.push({ path: ['model', 'matrix', i, j], message: `model.matrix must be symmetric: [${i}][${j}] is ${m[i][j]} but [${j}][${i}] is ${m[j][i]}` });
            break outer;
          }
    }
  }
  for (const key of name === 'quadratic' ? ['center', 'start'] : ['start']) {
    const v = model[key];
    if (Array.isArray(v) && v.length !== n)
      report.errors.push({ path: ['model', key], message: `model.${key} has ${v.length} entries, but the ${name} objective has ${n} parameters` });
  }
  for (const key of ['data', 'loss'])
    if (spec[key] !== undefined) report.warnings.push({ path: [key], atKey: true, message: `${key} is not used by the ${name} objective and is ignored` });
  if (isObj(spec.regularization) && isNum(spec.regularization.l2) && spec.regularization.l2 > 0)
    report.warnings.push({ path: ['regularization', 'l2'], message: `regularization.l2 penalizes network weight matrices; the ${name} objective has none, so it has no effect` });
  const recipe = isObj(spec.recipe) ? spec.recipe : {};
  if (Array.isArray(recipe.layers) && recipe.layers.length > 0)
    report.errors.push({ path: ['recipe', 'layers'], message: `recipe.layers sets per-layer rates of a network, but the ${name} objective has no layers` });
  for (const key of ['batch', 'curvatureBatch'])
    if (isPosInt(recipe[key])) report.warnings.push({ path: ['recipe', key], message: `recipe.${key} picks data rows; the ${name} objective has no data, so it has no effect` });
}

function checkRecipe(recipe: Obj, report: CheckReport): void {
  const opt = typeof recipe.optimizer === 'string' ? recipe.optimizer : 'sgd';
  if (!(opt in OPTIMIZER_SET)) return;
  for (const [key, users] of Object.entries(KEY_USERS)) {
    if (recipe[key] === undefined || users.includes(opt)) continue;
    const message = `recipe.${key} applies to ${users.join(' and ')}, not to ${opt}`;
    // A momentum the optimizer would silently ignore changes the method the user thinks they
    // run, so it is an error; an explicit 0 / false is harmless (e.g. after switching optimizer).
    const inert = recipe[key] === 0 || recipe[key] === false;
    if ((key === 'momentum' || key === 'nesterov') && !inert) report.errors.push({ path: ['recipe', key], atKey: true, message: `${message}; remove it` });
    else report.warnings.push({ path: ['recipe', key], atKey: true, message: `${message}, so it has no effect` });
  }
  if (opt === 'sgd' && recipe.nesterov === true && !(isNum(recipe.momentum) && recipe.momentum > 0))
    report.errors.push({ path: ['recipe', 'nesterov'], message: 'recipe.nesterov needs recipe.momentum > 0 (Nesterov momentum with zero momentum is undefined, as in PyTorch)' });
  if (opt === 'sgd' && recipe.nesterov === true && isNum(recipe.dampening) && recipe.dampening !== 0)
    report.errors.push({ path: ['recipe', 'dampening'], message: 'recipe.dampening must be 0 with Nesterov momentum (torch.optim.SGD refuses the combination)' });
  if (opt === 'lbfgs' && isPosInt(recipe.maxIter) && isPosInt(recipe.maxEval) && recipe.maxEval < recipe.maxIter)
    report.warnings.push({ path: ['recipe', 'maxEval'], message: `recipe.maxEval (${recipe.maxEval}) is below recipe.maxIter (${recipe.maxIter}), so the evaluation budget ends a step first` });
  const sched = isObj(recipe.schedule) ? recipe.schedule : undefined;
  if (sched?.kind === 'onecycle' && isPosInt(recipe.warmup))
    report.errors.push({ path: ['recipe', 'warmup'], message: 'recipe.warmup cannot be combined with a onecycle schedule, which rises to lr itself (its peak); remove warmup or set schedule.peak' });
  if (sched?.kind === 'sequence' && Array.isArray(sched.phases)) {
    sched.phases.forEach((p, i) => {
      const kind = isObj(p) ? p.kind : undefined;
      if (kind === 'plateau' || kind === 'onecycle' || kind === 'sequence')
        report.errors.push({ path: ['recipe', 'schedule', 'phases', i, 'kind'], message: `recipe.schedule.phases[${i}] cannot be ${String(kind)}: a sequence holds schedules that are functions of the step alone (as torch's SequentialLR)` });
    });
    if (Array.isArray(sched.milestones) && sched.milestones.length !== sched.phases.length - 1)
      report.errors.push({ path: ['recipe', 'schedule', 'milestones'], message: `recipe.schedule.milestones has ${sched.milestones.length} entries, but ${sched.phases.length} phases need ${sched.phases.length - 1}` });
    if (increasingFails(sched.milestones))
      report.errors.push({ path: ['recipe', 'schedule', 'milestones'], message: 'recipe.schedule.milestones must increase' });
  }
  if (sched?.kind === 'multistep' && increasingFails(sched.milestones))
    report.errors.push({ path: ['recipe', 'schedule', 'milestones'], message: 'recipe.schedule.milestones must increase' });
  if (sched?.kind === 'onecycle' && isPosInt(sched.steps)) {
    const peak = isNum(sched.peak) ? sched.peak : 0.3;
    const three = sched.threePhase === true;
    if (!(peak * sched.steps - 1 > 0 && (three ? 2 * peak * sched.steps - 2 : peak * sched.steps - 1) < sched.steps - 1))
      report.errors.push({ path: ['recipe', 'schedule', 'peak'], message: `recipe.schedule.peak ${peak} leaves a phase of the ${sched.steps}-step cycle without a step; raise steps or move the peak` });
  }
  if ((opt === 'sgd' || opt === 'rmsprop') && isNum(recipe.momentum) && recipe.momentum >= 1)
    report.warnings.push({ path: ['recipe', 'momentum'], message: `recipe.momentum is ${recipe.momentum}; with μ ≥ 1 the velocity never decays and the iteration cannot settle` });
}

const OPTIMIZER_SET: Readonly<Record<string, true>> = {
  sgd: true, adagrad: true, rmsprop: true, adam: true, adamw: true, lbfgs: true, cg: true, newton: true, 'gauss-newton': true, 'minibatch-lbfgs': true,
};

/** Runs every cross-field check over a raw spec value (which may have failed the schema). */
export function crossCheck(spec: unknown): CheckReport {
  const report: CheckReport = { errors: [], warnings: [] };
  if (!isObj(spec)) return report;
  if (spec.seed === undefined)
    report.warnings.push({ path: [], message: 'no seed given, so seed 0 is used; write seed: explicitly so the notebook states it' });
  const model = spec.model;
  if (isObj(model)) {
    if (model.objective !== undefined) checkObjective(spec, model, report);
    else checkNetwork(spec, model, report);
  }
  if (isObj(spec.recipe)) checkRecipe(spec.recipe, report);
  if (isObj(spec.loss) && typeof spec.loss.expr === 'string') {
    const d = spec.loss.derivative;
    const read = lossExpression(spec.loss.expr, typeof d === 'string' ? d : undefined);
    if (!read.ok) report.errors.push({ path: ['loss', read.key], within: read.problem.at, message: atKey(`loss.${read.key}`, read.problem.message) });
  }
  return report;
}

/** True when `list` is a list of numbers that fails to increase somewhere. */
function increasingFails(list: unknown): boolean {
  return Array.isArray(list) && list.some((m, i) => i > 0 && isNum(m) && isNum(list[i - 1]) && m <= (list[i - 1] as number));
}
