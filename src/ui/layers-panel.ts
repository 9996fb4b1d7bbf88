/**
 * The Layers tab: per-layer numbers of the step shown, activation health (pre-activation mean and
 * spread, saturated and dead shares, small histograms at step 0 and now), the initialization
 * check (each layer's weight spread against the fan-in rule, and what each scheme gives at step
 * 0), and the layer balance over time (a step × layer heat map of log10(‖ΔW‖/‖W‖) with the band of
 * common practice, and the gradient-norm ratio across depth). Everything shown was computed by
 * the worker; this only lays it out.
 */
import type { StepRecord } from '../core/state';
import type { ActivationHealth, LayerActivationHealth } from '../core/probe/activation-health';
import type { InitCandidate, InitCheck } from '../core/probe/init-check';
import type { LayerBalance } from '../core/probe/balance';
import { el, textTable } from './dom';
import { fmt } from './summary';
import { balanceHeatMap, histogramFigure, type HeatMap, type HistogramFigure } from './diagnosis-figures';
import type { DiagnosisView } from './view-state';

const SVG = 'http://www.w3.org/2000/svg';

/** A share as a percentage (`12.5 %`), `—` when it does not apply. */
export function share(x: number | null): string {
  if (x === null) return '—';
  if (!Number.isFinite(x)) return fmt(x);
  return `${Number((100 * x).toFixed(1))} %`;
}

/** Draws a small histogram as inline SVG with a text alternative. */
function histogramNode(f: HistogramFigure): SVGSVGElement {
  const svg = document.createElementNS(SVG, 'svg');
  svg.setAttribute('class', 'sw-Histogram');
  svg.setAttribute('viewBox', `0 0 ${f.width} ${f.height}`);
  svg.setAttribute('width', String(f.width));
  svg.setAttribute('height', String(f.height));
  svg.setAttribute('role', 'img');
  svg.setAttribute('aria-label', f.text);
  const base = document.createElementNS(SVG, 'line');
  base.setAttribute('class', 'sw-HistogramAxis');
  for (const [k, v] of [['x1', 0], ['x2', f.width], ['y1', f.height], ['y2', f.height]] as const) base.setAttribute(k, String(v));
  svg.appendChild(base);
  for (const b of f.bars) {
    const r = document.createElementNS(SVG, 'rect');
    r.setAttribute('class', 'sw-HistogramBar');
    for (const [k, v] of [['x', b.x], ['y', b.y], ['width', b.width], ['height', b.height]] as const) r.setAttribute(k, v.toFixed(2));
    const t = document.createElementNS(SVG, 'title');
    t.textContent = b.label;
    r.appendChild(t);
    svg.appendChild(r);
  }
  for (const x of f.marks) {
    const m = document.createElementNS(SVG, 'line');
    m.setAttribute('class', 'sw-HistogramMark');
    for (const [k, v] of [['x1', x], ['x2', x], ['y1', 0], ['y2', f.height]] as const) m.setAttribute(k, v.toFixed(2));
    svg.appendChild(m);
  }
  return svg;
}

function histogramCell(l: LayerActivationHealth | undefined): HTMLElement {
  const td = el('td', 'sw-HistogramCell');
  if (l !== undefined) td.appendChild(histogramNode(histogramFigure(l.histogram, l.saturationThreshold)));
  return td;
}

/** Activation health at step 0 and now, one row per layer. */
function healthTable(start: ActivationHealth | null, now: ActivationHealth | null): HTMLElement {
  const box = el('div', 'sw-Section');
  const shown = now ?? start;
  box.appendChild(el('h4', 'sw-SectionHead', `Activation health${now?.step !== null && now?.step !== undefined ? ` at step ${now.step}` : ''}`));
  if (shown === null) {
    box.appendChild(el('p', 'sw-Note', 'Activation health is measured for networks with data rows.'));
    return box;
  }
  const table = el('table', 'sw-Table sw-HealthTable');
  const head = el('tr');
  for (const h of ['layer', 'activation', 'pre-activation mean', 'spread', 'saturated', 'dead units', 'step 0', `step ${now?.step ?? 0}`]) head.appendChild(el('th', undefined, h));
  table.appendChild(el('thead')).appendChild(head);
  const body = el('tbody');
  shown.layers.forEach((l, i) => {
    const tr = el('tr');
    const sat = l.saturatedShare === null ? '—' : `${share(l.saturatedShare)} beyond |a| = ${l.saturationThreshold}`;
    const dead = l.deadShare === null ? '—' : `${share(l.deadShare)} (${Math.round(l.deadShare * l.units)} of ${l.units})`;
    // The saturated share keeps its threshold on one line ("|" allows a break after it).
    [String(l.layer), l.activation, fmt(l.preMean), fmt(l.preSpread), sat, dead].forEach((v, c) => tr.appendChild(el('td', c === 4 ? 'sw-NoWrap' : undefined, v)));
    tr.appendChild(histogramCell(start?.layers[i]));
    tr.appendChild(histogramCell(now?.layers[i]));
    body.appendChild(tr);
  });
  table.appendChild(body);
  box.appendChild(table);
  box.appendChild(el('p', 'sw-Note',
    `Over all ${shown.rows} training rows. Saturated: a tanh or sigmoid pre-activation beyond the marked |a|, where the slope is below 7 % of its peak; ` +
    'dead: a relu unit at or below 0 on every row. Histograms: pre-activations in bins of 0.5 on [−6, 6), the outer bars hold everything beyond.'));
  return box;
}

/** `lecun-normal ×0.05`, `explicit weights`. */
function candidateName(c: InitCandidate): string {
  return c.scheme === 'explicit' ? 'explicit weights' : `${c.scheme}${c.gain !== 1 ? ` ×${fmt(c.gain)}` : ''}`;
}

/** The initialization check: the chosen scheme against the fan-in rule, and what each scheme gives at step 0. */
function initTable(init: InitCheck | null): HTMLElement {
  const box = el('div', 'sw-Section');
  box.appendChild(el('h4', 'sw-SectionHead', 'Initialization check (step 0)'));
  if (init === null) {
    box.appendChild(el('p', 'sw-Note', 'The initialization check applies to networks with data rows.'));
    return box;
  }
  const rules: Record<string, string> = { lecun: '√(1/fan-in), LeCun 1998', he: '√(2/fan-in), He 2015', 'he-leaky': '√(2/((1+s²)·fan-in)), He 2015' };
  const chosen = init.chosen;
  const rows = chosen.layers.map(l => [
    String(l.layer), l.activation, String(l.fanIn), fmt(l.weightSpread) + (l.measured ? ' (measured)' : ''), `${fmt(l.ruleSpread)} (${rules[l.rule] ?? l.rule})`, `${fmt(l.ratio)}×`
  ]);
  box.appendChild(textTable('sw-Table sw-InitTable', ['layer', 'activation', 'fan-in', `weight spread, ${candidateName(chosen)}`, 'fan-in rule', 'ratio'], rows,
    i => (chosen.layers[i].offRule ? 'sw-mod-off' : '')));
  // The same scheme at the same gain is the chosen one drawn again from another stream: showing it
  // twice with different numbers reads as a contradiction, so the chosen draw stands for it.
  const all = [chosen, ...init.alternatives.filter(c => !(c.scheme === chosen.scheme && c.gain === chosen.gain))];
  const header = ['layer', ...all.map(c => `${candidateName(c)}${c.chosen ? ' (chosen)' : ''}`)];
  const cell = (c: InitCandidate, l: number): string => {
    const x = c.layers[l];
    // Non-breaking spaces keep "12.8 % saturated" on one line when the column is narrow.
    const nb = (t: string): string => t.replace(/ /g, '\u00a0');
    const extra = x.saturatedShare !== null ? ` · ${nb(`${share(x.saturatedShare)} saturated`)}` : x.deadShare !== null ? ` · ${nb(`${share(x.deadShare)} dead`)}` : '';
    return `${fmt(x.preSpread)}${extra}`;
  };
  box.appendChild(textTable('sw-Table sw-InitCompare', header, chosen.layers.map((_, l) => [String(l), ...all.map(c => cell(c, l))])));
  box.appendChild(el('p', 'sw-Note',
    `Second table: the pre-activation spread of each layer at step 0 (· the share saturated or dead) on all ${init.rows} training rows, under the chosen initialization and under each other scheme at gain 1 ` +
    '(weights drawn from their own seeded stream: one draw each, so a layer with few weights varies from draw to draw). ' +
    'Rows marked off differ from the fan-in rule by more than 2×.'));
  return box;
}

/** The heat map as a table with coloured cells, its legend and its text alternative. */
function heatMapNode(h: HeatMap): HTMLElement {
  const box = el('div', 'sw-HeatMapBox');
  // Few steps get wider cells; many get narrow ones (the table scrolls beyond the panel's width).
  const table = el('table', `sw-HeatMap${h.steps.length <= 30 ? ' sw-mod-wide' : ''}`);
  const caption = el('caption', 'sw-sr', h.text);
  table.appendChild(caption);
  const head = el('tr');
  head.appendChild(el('th', 'sw-HeatCorner', 'layer \\ step'));
  // About six step labels: every n-th column and the last, none crowding the last.
  const n = h.steps.length;
  const every = Math.max(1, Math.ceil(n / 6));
  h.steps.forEach((s, i) => {
    const th = el('th', 'sw-HeatStep');
    th.setAttribute('scope', 'col');
    const tick = i === n - 1 || (i % every === 0 && n - 1 - i >= Math.max(2, every / 2));
    th.appendChild(el('span', tick ? 'sw-HeatTick' : 'sw-sr', String(s)));
    head.appendChild(th);
  });
  table.appendChild(el('thead')).appendChild(head);
  const body = el('tbody');
  for (const r of h.rows) {
    const tr = el('tr');
    const th = el('th', 'sw-HeatLayer', `layer ${r.layer}`);
    th.setAttribute('scope', 'row');
    tr.appendChild(th);
    for (const c of r.cells) {
      const td = el('td', `sw-Heat sw-Heat-${c.zone}`);
      td.title = c.label;
      td.appendChild(el('span', 'sw-sr', c.value === null ? '—' : c.value.toFixed(2)));
      tr.appendChild(td);
    }
    body.appendChild(tr);
  }
  table.appendChild(body);
  const legend = el('ul', 'sw-HeatLegend');
  legend.setAttribute('aria-label', 'Colours of ‖ΔW‖/‖W‖');
  for (const l of h.legend) {
    const li = el('li');
    li.append(el('span', `sw-Heat sw-Heat-${l.zone} sw-HeatSwatch`), el('span', undefined, l.label));
    legend.appendChild(li);
  }
  box.append(table, legend);
  return box;
}

/** Layer balance over time: the heat map and the gradient-norm ratio across depth. */
function balanceSection(b: LayerBalance | null): HTMLElement {
  const box = el('div', 'sw-Section');
  box.appendChild(el('h4', 'sw-SectionHead', 'Layer balance over time'));
  if (b === null || b.steps.length === 0) {
    box.appendChild(el('p', 'sw-Note', 'Take a few steps: the balance is read from the updates along the trajectory.'));
    return box;
  }
  box.appendChild(heatMapNode(balanceHeatMap(b)));
  const span = (w: LayerBalance['window']): string => (w === null ? '—' : `steps\u00a0${w.from}–\u2060${w.to}`);
  const rows = b.recent.map(r => [
    String(r.layer), r.medianRatio === null ? '—' : r.medianRatio.toExponential(2), r.verdict, fmt(r.earlyDepthRatio), fmt(r.medianDepthRatio)
  ]);
  box.appendChild(textTable('sw-Table sw-DepthTable',
    ['layer', `median ‖ΔW‖/‖W‖, ${span(b.window)}`, 'against the band', `‖∇W‖ / last layer's, ${span(b.earlyWindow)}`, `‖∇W‖ / last layer's, ${span(b.window)}`], rows));
  box.appendChild(el('p', 'sw-Note',
    `‖ΔW‖/‖W‖ is often healthy near ${b.band.center.toExponential(0)} (a rule of thumb, Stanford CS231n notes); the band drawn is ` +
    `${b.band.low.toExponential(0)}–${b.band.high.toExponential(0)}, and below ${b.band.farLow.toExponential(0)} or above ${b.band.farHigh.toExponential(0)} counts as far outside. ` +
    'A gradient-norm ratio far below 1 towards the input means gradients shrink with depth.'));
  return box;
}

/** The Layers tab (see the module comment). */
export function layersPanel(last: StepRecord | undefined, d: DiagnosisView): HTMLElement {
  const box = el('div', 'sw-Readout sw-Layers');
  if (last === undefined || last.layers.length === 0) {
    box.appendChild(el('p', 'sw-Note', last === undefined ? 'No session yet.' : 'This objective has no layers.'));
    return box;
  }
  box.appendChild(el('h4', 'sw-SectionHead', `Per layer at step ${last.step}`));
  if (last.step === 0) box.appendChild(el('p', 'sw-Note', 'Take a step: the update ratio describes an update.'));
  const rows = last.layers.map(l => [String(l.layer), fmt(l.weightNorm), fmt(l.gradNorm), fmt(l.updateRatio)]);
  box.appendChild(textTable('sw-Table', ['layer', '‖W‖', '‖∇W‖', '‖ΔW‖ / ‖W‖'], rows));
  box.append(healthTable(d.activations.start, d.activations.now), initTable(d.init), balanceSection(d.derived.balance));
  return box;
}
