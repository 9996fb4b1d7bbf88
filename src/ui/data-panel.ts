/**
 * The Data tab: per-feature mean and spread, constant features, repeated rows, class balance,
 * the standardization applied (`data.standardize`), and the gradient noise scale against the
 * batch in use (measured on request). The worker computed every number; this lays them out.
 */
import type { NoiseScale } from '../core/probe/noise-scale';
import type { DataReport } from '../core/probe/data-checks';
import type { Standardization } from '../core/setup';
import { el, textTable } from './dom';
import { fmt } from './summary';
import { share } from './layers-panel';
import { staleNote } from './readouts';
import type { DiagnosisView } from './view-state';

/** What the noise verdict means, in words (the verdict itself is core's). */
export const NOISE_WORDS: Record<NoiseScale['verdict'], string> = {
  'below-noise-scale': 'well below the noise scale: larger batches would speed training almost in proportion',
  'near-noise-scale': 'near the noise scale',
  'above-noise-scale': 'well above the noise scale: more rows per update buy little',
  undefined: 'the noise scale is not defined here (the full-batch gradient is zero or not finite)'
};

function featuresTable(d: DataReport): HTMLElement {
  const rows = d.features.map(f => [String(f.index), fmt(f.mean), fmt(f.spread), fmt(f.min), fmt(f.max), f.constant ? 'constant' : '']);
  return textTable('sw-Table sw-FeatureTable', ['feature', 'mean', 'spread', 'min', 'max', ''], rows, i => (d.features[i].constant ? 'sw-mod-off' : ''));
}

function standardizationNode(s: Standardization | null, d: DataReport): HTMLElement {
  const box = el('div', 'sw-Section');
  box.appendChild(el('h4', 'sw-SectionHead', 'Standardization'));
  if (s === null) {
    box.appendChild(el('p', 'sw-Note', 'The inputs are used as given (data.standardize is off).'));
    return box;
  }
  box.appendChild(el('p', 'sw-Note',
    `data.standardize is on: each input column is shifted by the training rows' mean and divided by their population spread (held-out rows use the same numbers); ` +
    `the statistics above are of the standardized inputs.${s.constant.length > 0 ? ` Constant columns (${s.constant.join(', ')}) are only centred.` : ''}`));
  const n = Math.min(s.mean.length, d.features.length);
  box.appendChild(textTable('sw-Table sw-StandardizeTable', ['feature', 'mean subtracted', 'spread divided by'], Array.from({ length: n }, (_, j) => [String(j), fmt(s.mean[j]), s.spread[j] > 0 ? fmt(s.spread[j]) : '1 (constant)'])));
  return box;
}

function classesNode(d: DataReport): HTMLElement | null {
  const c = d.classes;
  if (c === null) return null;
  if (c.kind === 'classes') {
    return textTable('sw-Table sw-ClassTable', ['class', 'rows', 'share'], c.counts.map((n, k) => [String(k), String(n), share(n / d.rows)]));
  }
  return textTable('sw-Table sw-ClassTable', ['target column', 'share of 1s'], c.positiveShare.map((p, j) => [String(j), share(p)]));
}

function noiseNode(noise: NoiseScale | null, onMeasure: () => void, busy: boolean, step: number): HTMLElement {
  const box = el('div', 'sw-Section');
  box.appendChild(el('h4', 'sw-SectionHead', 'Gradient noise against the batch'));
  const run = el('button', 'jp-Button sw-Button sw-Button-noise', noise === null ? 'Measure the noise scale' : 'Measure again');
  run.type = 'button';
  run.disabled = busy;
  run.title = 'Per-row gradients at the current weights: B = tr(Σ)/|G|² (McCandlish et al. 2018)';
  run.addEventListener('click', onMeasure);
  box.appendChild(run);
  if (noise === null) {
    box.appendChild(el('p', 'sw-Note', 'The simple gradient noise scale B = tr(Σ)/|G|² (McCandlish et al., 2018) from per-row gradients at the current weights, against the rows per update.'));
    return box;
  }
  const stale = staleNote(noise.step ?? 0, step, 'Measure again');
  if (stale !== null) box.appendChild(stale);
  box.appendChild(el('p', 'sw-Note',
    `At step ${noise.step ?? '—'}: B = ${fmt(noise.noiseScale)} from ${noise.sampleRows} of ${noise.totalRows} rows (tr(Σ) = ${fmt(noise.traceCovariance)}, |G|² = ${fmt(noise.gradientSquared)}); ` +
    `the batch of ${noise.batch} rows is ${NOISE_WORDS[noise.verdict]}.`));
  return box;
}

/** The Data tab (see the module comment). */
export function dataPanel(d: DiagnosisView, onMeasureNoise: () => void, busy: boolean, step: number): HTMLElement {
  const box = el('div', 'sw-Readout sw-Data');
  const data = d.data;
  if (data === null) {
    box.appendChild(el('p', 'sw-Note', 'This objective has no data rows (an analytic function).'));
    return box;
  }
  box.appendChild(el('h4', 'sw-SectionHead', `${data.rows} training rows, ${data.inputs} input features${data.heldOutRows > 0 ? `, ${data.heldOutRows} held-out rows` : ''}`));
  box.appendChild(featuresTable(data));
  if (data.features.length < data.inputs) box.appendChild(el('p', 'sw-Note', `The first ${data.features.length} of ${data.inputs} features are listed; the counts below cover all.`));
  const facts: string[] = [];
  facts.push(`${data.duplicateRows} row${data.duplicateRows === 1 ? '' : 's'} (${share(data.duplicateShare)}) repeat an earlier row exactly`);
  if (data.conflictingRows > 0) facts.push(`${data.conflictingRows} repeat an earlier row's inputs with other targets`);
  if (data.heldOutRows > 0) facts.push(`${data.heldOutInTraining} held-out row${data.heldOutInTraining === 1 ? '' : 's'} also occur among the training inputs`);
  facts.push(data.constantFeatures.length > 0 ? `constant features: ${data.constantFeatures.join(', ')}` : 'no constant feature');
  if (data.spreadRatio !== null) facts.push(`largest over smallest feature spread: ${fmt(data.spreadRatio)}`);
  if (data.largestOffset !== null) facts.push(`largest |mean| / spread: ${fmt(data.largestOffset.ratio)} (feature ${data.largestOffset.feature})`);
  const list = el('ul', 'sw-Facts');
  for (const f of facts) list.appendChild(el('li', undefined, `${f}.`));
  box.appendChild(list);
  const classes = classesNode(data);
  if (classes !== null) {
    box.appendChild(el('h4', 'sw-SectionHead', 'Class balance'));
    box.appendChild(classes);
  }
  box.append(standardizationNode(d.derived.standardization, data), noiseNode(d.noise, onMeasureNoise, busy, step));
  return box;
}
