/**
 * The comparison panel's note when the compared branches differ only in batch size: their batch
 * sizes, that the loss is shown against examples seen, and the gradient noise scale the active
 * branch measured (Data tab), with core's verdict on its own batch. Nothing is computed here.
 */
import type { NoiseScale } from '../core/probe/noise-scale';
import type { BatchOfBranch } from '../worker/batch-branches';
import type { CompareAxis } from '../figures/compare';
import { button, el } from './dom';
import { fmt } from './summary';
import { NOISE_WORDS } from './data-panel';

/**
 * The note (see the module comment).
 *
 * @param noise - the active branch's latest gradient noise scale, or null when not measured.
 * @param active - the active branch's name (whose noise scale it is).
 */
export function batchNote(sizes: readonly BatchOfBranch[], axis: CompareAxis, noise: NoiseScale | null, active: string, actions: { axis(axis: CompareAxis): void; measureNoise(): void }, busy: boolean): HTMLElement {
  const box = el('div', 'sw-Section sw-BatchNote');
  box.appendChild(el('h4', 'sw-SectionHead', 'These branches differ only in batch size'));
  const list = sizes.map((b) => `${b.name}: ${b.batch}${b.full ? ' (full batch)' : ''}`).join(', ');
  box.appendChild(el('p', 'sw-Note', `Rows per update — ${list}. ${axis === 'examples' ? 'The loss above is drawn against examples seen, so each batch size is judged on the same data drawn.' : 'Drawn by step, a larger batch sees more examples per step.'}`));
  if (axis !== 'examples') {
    const b = button('Show by examples seen', 'Draw the loss against examples drawn', () => actions.axis('examples'), 'sw-Button-byExamples');
    b.disabled = busy;
    box.appendChild(b);
  }
  if (noise === null) {
    const m = button('Measure the noise scale', `The gradient noise scale B = tr(Σ)/|G|² (McCandlish et al., 2018) at the current weights of ${active}`, () => actions.measureNoise(), 'sw-Button-noise');
    m.disabled = busy;
    box.append(el('p', 'sw-Note', `The gradient noise scale of ${active} is not measured yet.`), m);
    return box;
  }
  box.appendChild(el('p', 'sw-Note',
    `Gradient noise scale of ${active} at step ${noise.step ?? '—'}: B = ${fmt(noise.noiseScale)} (McCandlish et al., 2018; from ${noise.sampleRows} of ${noise.totalRows} rows). ` +
    `Its batch of ${noise.batch} rows is ${NOISE_WORDS[noise.verdict]}. Batches well below B use each example efficiently; well above B they spend examples for little gain per update.`));
  return box;
}
