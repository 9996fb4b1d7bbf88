/**
 * The comparison readout: which branches to compare (the first checked is the reference), the
 * loss overlay by step or by examples drawn, the overlaid sharpness traces, the branches' patches
 * with the changed keys highlighted, and the key numbers at matched steps with the worker's
 * verdicts. Plain DOM from the worker's comparison; nothing is recomputed here.
 */
import type { BranchInfo } from '../worker/protocol';
import type { LossVerdict } from '../core/session';
import { button, el, textTable } from './dom';
import { comparisonText, type CompareAxis } from '../figures/compare';
import { fmt } from './summary';
import type { ComparisonView } from './view-state';
import type { NoiseScale } from '../core/probe/noise-scale';
import { batchNote } from './batch-note';

/** What the comparison panel's controls do. */
export interface ComparePanelActions {
  choose(names: string[]): void;
  axis(axis: CompareAxis): void;
  refresh(): void;
  record(): void;
  measureNoise(): void;
}

/** Names radio groups uniquely per panel. */
let radioGroups = 0;

const VERDICT_TEXT: Record<LossVerdict, string> = { reference: 'reference', better: 'lower', worse: 'higher', same: 'same', diverged: 'not finite' };

/** A branch's patch with each changed key in a `<mark>`. */
function patchNode(b: BranchInfo): HTMLElement {
  const span = el('span', 'sw-PatchDiff');
  if (b.parent === null) {
    span.textContent = 'the spec as written';
    return span;
  }
  const entries = Object.entries(b.patch);
  entries.forEach(([k, v], i) => {
    span.append(el('mark', 'sw-PatchKey', k), document.createTextNode(` = ${typeof v === 'string' ? v : JSON.stringify(v)}${i < entries.length - 1 ? ', ' : ''}`));
  });
  span.append(document.createTextNode(` (from ${b.parent} at step ${b.forkStep}${b.restart ? ', restarted' : ''})`));
  return span;
}

/**
 * Builds the panel.
 *
 * @param plots - the nodes plotly draws the loss and sharpness overlays into (reused across rebuilds).
 */
export function comparePanel(view: ComparisonView, branches: readonly BranchInfo[], busy: boolean, actions: ComparePanelActions, plots: { loss: HTMLElement; sharpness: HTMLElement }, noise: { scale: NoiseScale | null; active: string } = { scale: null, active: '' }): HTMLElement {
  const box = el('div', 'sw-Readout sw-Compare');
  const chosen = view.data?.comparison.branches ?? view.names;
  const pick = el('fieldset', 'sw-ComparePick');
  pick.append(el('legend', undefined, 'Compare (the first checked is the reference)'));
  for (const b of branches) {
    const label = el('label', 'sw-CompareChoice');
    const box = el('input');
    box.type = 'checkbox';
    box.checked = chosen.includes(b.name);
    box.disabled = busy;
    box.addEventListener('change', () => {
      const next = box.checked ? [...chosen.filter(n => n !== b.name), b.name] : chosen.filter(n => n !== b.name);
      if (next.length > 0) actions.choose(next);
    });
    label.append(box, document.createTextNode(` ${b.name}`));
    pick.appendChild(label);
  }
  const axes = el('fieldset', 'sw-CompareAxis');
  axes.append(el('legend', undefined, 'x axis'));
  const noExamples = view.data !== null && view.data.traces.some(t => t.examples === null);
  const group = `sw-axis-${++radioGroups}`;
  for (const [value, text] of [['step', 'step'], ['examples', 'examples drawn']] as [CompareAxis, string][]) {
    const label = el('label');
    const radio = el('input');
    radio.type = 'radio';
    radio.name = group;
    radio.value = value;
    radio.checked = view.axis === value;
    radio.disabled = value === 'examples' && noExamples;
    radio.addEventListener('change', () => radio.checked && actions.axis(value));
    label.append(radio, document.createTextNode(` ${text}`));
    axes.appendChild(label);
  }
  const controls = el('div', 'sw-Controls');
  const refresh = button('Refresh', 'Compare the checked branches again (after stepping them)', actions.refresh, 'sw-Button-refreshCompare');
  const record = button('Write decision record…', 'Write a markdown cell below this cell with the question, the evidence and the chosen recipe', actions.record, 'sw-Button-record');
  refresh.disabled = busy;
  record.disabled = busy || view.data === null;
  controls.append(refresh, record);
  box.append(pick, axes, controls);
  if (view.data === null) {
    box.appendChild(el('p', 'sw-Note', busy ? 'Comparing…' : 'Check two or more branches to compare them.'));
    return box;
  }
  const { comparison: c, traces } = view.data;
  const alt = comparisonText(traces, view.axis);
  plots.loss.setAttribute('role', 'img');
  plots.loss.setAttribute('aria-label', alt);
  box.appendChild(plots.loss);
  box.appendChild(el('p', 'sw-Note sw-FigureText', alt));
  if (view.data.batchOnly) box.appendChild(batchNote(view.data.batchOnly, view.axis, noise.scale, noise.active, actions, busy));
  if (traces.some(t => t.sharpness.length > 0)) {
    plots.sharpness.setAttribute('role', 'img');
    plots.sharpness.setAttribute('aria-label', 'Sharpness of the compared branches against each one’s stability limit (dashed).');
    box.appendChild(plots.sharpness);
  }
  const rows = traces.map(t => {
    const info = branches.find(b => b.name === t.name);
    const tr = el('tr');
    const changes = el('td');
    if (info) changes.appendChild(patchNode(info));
    tr.append(el('td', undefined, t.name), changes, el('td', undefined, t.recipe), el('td', undefined, String(t.tip)));
    return tr;
  });
  const patches = el('table', 'sw-Table sw-PatchTable');
  const head = el('tr');
  for (const h of ['branch', 'change against its parent', 'recipe', 'steps']) head.appendChild(el('th', undefined, h));
  patches.append(el('thead'), el('tbody'));
  patches.tHead?.appendChild(head);
  patches.tBodies[0].append(...rows);
  box.appendChild(patches);
  if (c.steps.length === 0) {
    box.appendChild(el('p', 'sw-Note', 'The branches share no recorded step to compare at.'));
  } else {
    const table: string[][] = [];
    const marks: string[] = [];
    for (const s of c.steps) {
      for (const x of s.cells) {
        table.push([
          String(s.step), x.branch, fmt(x.loss), VERDICT_TEXT[x.verdict], fmt(x.heldOutLoss), fmt(x.gradNorm),
          x.updateRatios.length === 0 ? '—' : x.updateRatios.map(v => fmt(v)).join(', '),
          x.sharpness === null ? '—' : x.limit === null ? fmt(x.sharpness) : `${fmt(x.sharpness)} / ${fmt(x.limit)}`
        ]);
        marks.push(`sw-Verdict-${x.verdict}${x.stable === false ? ' sw-mod-unstable' : ''}`);
      }
    }
    box.appendChild(el('p', 'sw-Note', `Key numbers at matched steps, against ${c.reference}:`));
    box.appendChild(textTable('sw-Table sw-MatchTable', ['step', 'branch', 'training loss', 'vs reference', 'held-out', '‖g‖', '‖ΔW‖/‖W‖ per layer', 'sharpness / limit'], table, i => marks[i]));
  }
  for (const x of c.crossings) {
    if (x.measured === 0) continue;
    box.appendChild(el('p', `sw-Stability${x.step !== null ? ' sw-mod-unstable' : ''}`,
      x.step === null ? `${x.branch}: the sharpness stayed within the stability limit over ${x.measured} measurements.`
        : `${x.branch}: the sharpness first exceeded the stability limit at step ${x.step} (${fmt(x.sharpness)} > ${fmt(x.limit)}).`));
  }
  if (c.best !== null) box.appendChild(el('p', 'sw-Note', `At step ${c.best.step}, the last step all of them reached, the lowest training loss is on ${c.best.branch}.`));
  return box;
}
