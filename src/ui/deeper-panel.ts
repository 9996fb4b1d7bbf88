/**
 * The Deeper tab: the user picks a deeper readout (line profile, 2-D slice, learning-rate range
 * test, precision tolerance, batch sizes) and its options, takes it at the branch's cursor, and
 * sees the branch's latest complete result of that kind: where it was taken (step, branch), a
 * note when the branch has moved since, the figure and the numbers. The worker computed every
 * number and verdict; this lays them out. Figures are built by `figures/deeper.ts` and drawn by
 * the panel view ({@link deeperFigures} says which goes where).
 */
import type { DeeperKept, DeeperKind } from '../worker/deeper';
import { DEEPER_KINDS } from '../worker/deeper';
import type { LineReadout } from '../core/probe/line';
import type { PlaneReadout } from '../core/probe/slice';
import type { RangeTestAtResult } from '../core/probe/readouts-at';
import type { PrecisionReadout } from '../core/probe/precision';
import type { BatchComparison } from '../core/probe/batch-compare';
import type { Figure, FigureTheme } from '../figures/trace';
import { batchFigure, lineFigure, planeFigure, rangeFigure } from '../figures/deeper';
import { el, textTable } from './dom';
import { fmt } from './summary';
import { share } from './layers-panel';
import { staleNote } from './readouts';
import { NOISE_WORDS } from './data-panel';
import { DEEPER_LABELS, type DeeperChoice } from './deeper-form';

/** Plot nodes of the tab (reused across rebuilds; plotly updates them in place). */
export interface DeeperPlots {
  lineUpdate: HTMLElement;
  lineEigen: HTMLElement;
  plane: HTMLElement;
  range: HTMLElement;
  batch: HTMLElement;
}

/** What the tab's controls call. */
export interface DeeperActions {
  choose(patch: Partial<DeeperChoice>): void;
  take(): void;
}

/** What each readout answers, with its published source where it has one. */
const ABOUT: Record<DeeperKind, string> = {
  line: 'The loss along the update the optimizer takes next and along the top Hessian eigenvector, with the local quadratic model, the step taken and Brent\'s minimum along each line.',
  plane: 'The loss over a plane through the current weights, spanned by two filter-normalized random directions (Li et al., 2018) or the top two Hessian eigenvectors, with the branch\'s checkpoints projected onto it.',
  range: 'A throwaway run from the current state, one update per learning rate on a log grid (Smith, 2017), with the suggested range and the recipe\'s stability limit at the current sharpness. The branch is untouched.',
  precision: 'The loss (and accuracy, for classification) with every weight rounded to k significant bits, at the current weights.',
  batch: 'Throwaway runs from the current state with each batch size, compared at equal examples seen, beside the gradient noise scale B = tr(Σ)/|G|² (McCandlish et al., 2018). The branch is untouched.'
};

/** A labelled text input that reports its text on every edit (no rebuild, so focus stays). */
function field(label: string, value: string, key: keyof DeeperChoice, actions: DeeperActions, width = '6em'): HTMLElement {
  const wrap = el('label', 'sw-DeeperField');
  const input = el('input', 'sw-Input');
  input.value = value;
  input.style.width = width;
  input.dataset.option = key;
  input.addEventListener('input', () => actions.choose({ [key]: input.value }));
  input.addEventListener('keydown', (e) => {
    if (e.key === 'Enter') actions.take();
  });
  wrap.append(`${label} `, input);
  return wrap;
}

function optionsRow(c: DeeperChoice, actions: DeeperActions): HTMLElement {
  const row = el('div', 'sw-DeeperOptions');
  switch (c.kind) {
    case 'line':
      row.append(field('points along each line', c.linePoints, 'linePoints', actions));
      break;
    case 'plane': {
      const wrap = el('label', 'sw-DeeperField');
      const select = el('select', 'sw-Input sw-DeeperDirections');
      for (const [v, text] of [['random', 'filter-normalized random'], ['eigenvectors', 'top two eigenvectors']] as const) {
        const o = el('option', undefined, text);
        o.value = v;
        o.selected = c.directions === v;
        select.appendChild(o);
      }
      select.addEventListener('change', () => actions.choose({ directions: select.value === 'eigenvectors' ? 'eigenvectors' : 'random' }));
      wrap.append('directions ', select);
      row.append(wrap, field('points per side', c.planePoints, 'planePoints', actions));
      break;
    }
    case 'range':
      row.append(field('from η', c.rangeFrom, 'rangeFrom', actions), field('to η', c.rangeTo, 'rangeTo', actions), field('rates', c.rangeSteps, 'rangeSteps', actions));
      break;
    case 'precision':
      row.append(field('significant bits', c.bits, 'bits', actions, '12em'));
      break;
    case 'batch':
      row.append(field('batch sizes', c.batchSizes, 'batchSizes', actions, '10em'), field('examples per run', c.batchExamples, 'batchExamples', actions));
      break;
  }
  return row;
}

function lineFacts(r: LineReadout): HTMLElement {
  const u = r.update;
  const facts = [
    `loss ${fmt(r.loss)}; along the update: slope ${fmt(u.slope)}, curvature ${fmt(u.curvature)}, quadratic model's minimum at t = ${fmt(u.quadraticMinimum)}` +
      `, Brent's minimum ${u.minimum.t === null ? `not found (${u.minimum.note ?? 'none bracketed'})` : `at t = ${fmt(u.minimum.t)} (loss ${fmt(u.minimum.loss)})`}; one unit of t is ‖Δw‖ = ${fmt(u.unit)}`,
    r.eigenvector === undefined
      ? 'No eigenvector line: the Hessian has no positive eigenvalue to follow here.'
      : `along the top eigenvector (λ = ${fmt(r.eigenvector.eigenvalue)}): the step taken lies at t = ${fmt(r.eigenvector.stepAt)}, Brent's minimum ${r.eigenvector.minimum.t === null ? 'not found' : `at t = ${fmt(r.eigenvector.minimum.t)}`}`
  ];
  const list = el('ul', 'sw-Facts');
  for (const f of facts) list.appendChild(el('li', undefined, `${f}.`));
  return list;
}

function planeFacts(r: PlaneReadout): HTMLElement {
  const dirs = r.kind === 'random' ? `filter-normalized random directions (‖d₁‖ = ${fmt(r.norms[0])}, ‖d₂‖ = ${fmt(r.norms[1])})` : `the top two eigenvectors (λ = ${fmt(r.eigenvalues?.[0])}, ${fmt(r.eigenvalues?.[1])})`;
  const far = Math.max(0, ...r.path.offPlane.filter((v) => Number.isFinite(v)));
  return el('p', 'sw-Note', `${r.alpha.length} × ${r.beta.length} grid over ${dirs}; ${r.evaluations} loss evaluations. The trajectory's ${r.path.steps.length} points (steps ${r.path.steps.join(', ')}) are projected; the farthest lies ${fmt(far)} off the plane.`);
}

function rangeFacts(r: RangeTestAtResult): HTMLElement {
  const facts = [
    `${r.lr.length} of ${r.grid.length} rates tried from step ${r.startStep} (start loss ${fmt(r.startLoss)}); the run ${r.end === 'diverged' ? 'stopped when the loss blew up' : 'completed'}`,
    r.suggested === null ? 'no range suggested: the loss never fell 1% below its start' : `suggested learning rates: ${fmt(r.suggested.low)} to ${fmt(r.suggested.high)}`,
    r.limit === null || r.limit.largestStableLr === null ? 'no stability limit applies to this recipe' : `stability limit ${r.limit.formula} = ${fmt(r.limit.largestStableLr)} at sharpness ${fmt(r.limit.sharpness)}`
  ];
  if (r.beyondLimit) facts.push('the suggested range reaches past the stability limit: its upper end is not a safe constant rate');
  const list = el('ul', 'sw-Facts');
  for (const f of facts) list.appendChild(el('li', undefined, `${f}.`));
  return list;
}

function precisionTable(r: PrecisionReadout): HTMLElement {
  const acc = r.rows.some((row) => row.accuracy !== undefined);
  const header = ['significant bits', 'loss', 'change', ...(acc ? ['accuracy'] : []), 'largest relative weight change'];
  const rows = r.rows.map((row) => [row.bits === 53 ? '53 (float64)' : String(row.bits), fmt(row.loss), fmt(row.lossChange), ...(acc ? [share(row.accuracy ?? null)] : []), fmt(row.maxRelativeChange)]);
  return textTable('sw-Table sw-PrecisionTable', header, rows);
}

function batchTable(c: BatchComparison): HTMLElement {
  const box = el('div');
  const n = c.noiseScale;
  box.appendChild(el('p', 'sw-Note', `Each run drew at least ${c.budget} examples from step ${c.startStep}. Gradient noise scale there: B = ${fmt(n.noiseScale)} (from ${n.sampleRows} of ${n.totalRows} rows).` +
    (c.best === null ? ' Every run diverged.' : ` Lowest final loss: batch ${c.best}.`)));
  const rows = c.runs.map((r) => [`${r.batch}${r.full ? ' (full)' : ''}`, String(r.updates), fmt(r.finalLoss), r.diverged ? 'diverged' : r.verdict, NOISE_WORDS[r.noise].split(':')[0]]);
  box.appendChild(textTable('sw-Table sw-BatchTable', ['batch', 'updates', 'final loss', 'against the lowest', 'against B'], rows, (i) => (c.runs[i].batch === c.best ? 'sw-mod-best' : '')));
  return box;
}

/**
 * The tab's content for the chosen readout.
 *
 * @param where - the active branch and its cursor (a result taken elsewhere is marked stale).
 */
export function deeperPanel(c: DeeperChoice, kept: DeeperKept, where: { branch: string; step: number }, busy: boolean, actions: DeeperActions, plots: DeeperPlots): HTMLElement {
  const box = el('div', 'sw-Readout sw-Deeper');
  const kinds = el('div', 'sw-DeeperKinds');
  kinds.setAttribute('role', 'group');
  kinds.setAttribute('aria-label', 'Deeper readout');
  for (const k of DEEPER_KINDS) {
    const b = el('button', 'jp-Button sw-Button sw-DeeperKind', DEEPER_LABELS[k]);
    b.type = 'button';
    b.dataset.kind = k;
    b.setAttribute('aria-pressed', String(k === c.kind));
    b.addEventListener('click', () => actions.choose({ kind: k }));
    kinds.appendChild(b);
  }
  const take = el('button', 'jp-Button sw-Button sw-Button-deeper', kept[c.kind] === undefined ? `Take the ${DEEPER_LABELS[c.kind].toLowerCase()}` : 'Take it again');
  take.type = 'button';
  take.disabled = busy;
  take.title = `At step ${where.step} of branch ${where.branch}; Stop discards a partial result`;
  take.addEventListener('click', () => actions.take());
  const options = optionsRow(c, actions);
  options.appendChild(take);
  box.append(kinds, el('p', 'sw-Note', ABOUT[c.kind]), options);
  const r = kept[c.kind];
  if (r === undefined) {
    box.appendChild(el('p', 'sw-Note', `Not taken on branch ${where.branch} yet.`));
    return box;
  }
  box.appendChild(el('h4', 'sw-SectionHead sw-DeeperWhere', `${DEEPER_LABELS[c.kind]} taken at step ${r.step} of branch ${where.branch}`));
  const stale = staleNote(r.step, where.step, 'Take it again');
  if (stale !== null) box.appendChild(stale);
  switch (r.what) {
    case 'line':
      box.append(plots.lineUpdate, ...(r.result.eigenvector === undefined ? [] : [plots.lineEigen]), lineFacts(r.result));
      break;
    case 'plane':
      box.append(plots.plane, planeFacts(r.result));
      break;
    case 'range':
      box.append(plots.range, rangeFacts(r.result));
      break;
    case 'precision':
      box.append(precisionTable(r.result));
      break;
    case 'batch':
      box.append(plots.batch, batchTable(r.result));
      break;
  }
  return box;
}

/** `f` with its title at the top of the figure and the legend below it (in the cell, where a figure is 240 px high, they would overlap). */
function titledAbove(f: Figure): Figure {
  if (f.layout.title === undefined) return f;
  return { ...f, layout: { ...f.layout, height: f.layout.height + 30, margin: { ...f.layout.margin, t: f.layout.margin.t + 30 }, title: { ...f.layout.title, y: 0.98, yanchor: 'top' } } };
}

/** The figures the shown result needs, each with the plot node it goes into. */
export function deeperFigures(kind: DeeperKind, kept: DeeperKept, plots: DeeperPlots, theme: FigureTheme): [HTMLElement, Figure][] {
  const r = kept[kind];
  if (r === undefined) return [];
  switch (r.what) {
    case 'line': {
      const out: [HTMLElement, Figure][] = [[plots.lineUpdate, titledAbove(lineFigure(r.result.update, theme, `Along the update (step ${r.step})`))]];
      if (r.result.eigenvector !== undefined) out.push([plots.lineEigen, titledAbove(lineFigure(r.result.eigenvector, theme, `Along the top eigenvector (step ${r.step})`))]);
      return out;
    }
    case 'plane':
      return [[plots.plane, planeFigure(r.result, theme)]];
    case 'range':
      return [[plots.range, titledAbove(rangeFigure(r.result, theme))]];
    case 'precision':
      return [];
    case 'batch':
      return [[plots.batch, batchFigure(r.result, theme)]];
  }
}
