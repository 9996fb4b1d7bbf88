/**
 * The inline forms of the cell widget: "Run until…" and "Rewind…". Each returns its root
 * node; values are read from the inputs on submit and checked with exact messages.
 */
import type { StopCondition } from '../worker/protocol';
import { thinCheckpoints } from '../ledger/caps';
import { button, el } from './dom';

/**
 * The checkpoint steps offered as chips: the ones the notebook keeps — the ledger's thinning
 * (`thinCheckpoints`) of the branch's checkpoints and its tip to `cap`, the setting "Checkpoints
 * kept in the notebook" — so the form never offers more than the notebook keeps.
 */
export function chipSteps(checkpointSteps: readonly number[], cursor: number, tip: number, cap: number): number[] {
  // The ledger always keeps the state at the cursor (when before the tip) besides first and tip.
  const keep = cursor < tip ? [cursor] : [];
  return thinCheckpoints([...checkpointSteps.filter(s => s <= tip), ...keep, tip], Math.max(2, cap), keep);
}

/** Parses a positive finite number from an input, or returns an error message naming the field. */
export function readNumber(text: string, field: string, integer: boolean, min: number): number | string {
  const v = Number(text.trim());
  if (text.trim() === '' || !Number.isFinite(v)) return `${field} must be a number, got '${text}'`;
  if (integer && !Number.isInteger(v)) return `${field} must be a whole number, got ${text}`;
  if (v < min) return `${field} must be at least ${min}, got ${text}`;
  return v;
}

/** Builds the run-until form. */
export function runUntilForm(
  initial: { condition: StopCondition; maxSteps: number },
  onRun: (condition: StopCondition, maxSteps: number) => void,
  onCancel: () => void
): HTMLElement {
  const form = el('div', 'sw-Form');
  const kind = el('select', 'sw-Select');
  kind.setAttribute('aria-label', 'stop condition');
  const options: [StopCondition['kind'], string][] = [
    ['loss-below', 'training loss ≤'],
    ['grad-norm-below', 'gradient norm ≤'],
    ['diverged', 'loss grows above × start']
  ];
  for (const [value, label] of options) {
    const o = el('option', undefined, label);
    o.value = value;
    kind.appendChild(o);
  }
  kind.value = initial.condition.kind;
  const value = el('input', 'sw-Input');
  value.setAttribute('aria-label', 'threshold');
  const c = initial.condition;
  value.value = String(c.kind === 'diverged' ? c.factor ?? 1000 : c.kind === 'steps' ? c.count : c.value);
  const max = el('input', 'sw-Input');
  max.setAttribute('aria-label', 'most steps');
  max.value = String(initial.maxSteps);
  const error = el('span', 'sw-FormError');
  const go = button('Run', 'Start stepping until the condition holds', () => {
    const threshold = readNumber(value.value, 'the threshold', false, 0);
    const steps = readNumber(max.value, 'most steps', true, 1);
    if (typeof threshold === 'string' || typeof steps === 'string') {
      error.textContent = typeof threshold === 'string' ? threshold : String(steps);
      return;
    }
    const k = kind.value;
    const condition: StopCondition =
      k === 'diverged' ? { kind: 'diverged', factor: threshold }
        : k === 'grad-norm-below' ? { kind: 'grad-norm-below', value: threshold }
          : { kind: 'loss-below', value: threshold };
    onRun(condition, steps);
  });
  form.append(el('span', 'sw-Label', 'Step until'), kind, value, el('span', 'sw-Label', 'at most'), max,
    el('span', 'sw-Label', 'steps'), go, button('Cancel', 'Close this form', onCancel), error);
  return form;
}

/**
 * Builds the rewind form: the kept checkpoints as chips plus a free step number up to the
 * branch's furthest step (the steps after the target are kept, not dropped).
 */
export function rewindForm(
  chips: readonly number[],
  current: number,
  tip: number,
  onRewind: (step: number) => void,
  onCancel: () => void
): HTMLElement {
  const form = el('div', 'sw-Form');
  const input = el('input', 'sw-Input');
  input.setAttribute('aria-label', `go to step (0 to ${tip})`);
  const below = chips.filter(s => s < current);
  input.value = String(below.length > 0 ? below[below.length - 1] : 0);
  const list = el('span', 'sw-Chips');
  for (const s of chips) {
    if (s > tip) continue;
    const chip = button(String(s), `Go to the checkpoint at step ${s}`, () => onRewind(s), 'sw-Chip');
    if (s === current) chip.setAttribute('aria-current', 'step');
    list.appendChild(chip);
  }
  const error = el('span', 'sw-FormError');
  const go = button('Go', 'Go to this step (replayed from the nearest checkpoint); later steps are kept', () => {
    const step = readNumber(input.value, 'the step', true, 0);
    if (typeof step === 'string') {
      error.textContent = step;
      return;
    }
    if (step > tip) {
      error.textContent = `the step must be at most the furthest step ${tip}, got ${step}`;
      return;
    }
    onRewind(step);
  }, 'sw-Button-go');
  form.append(el('span', 'sw-Label', 'Checkpoints:'), list, el('span', 'sw-Label', 'or step'), input, go,
    button('Cancel', 'Close this form', onCancel), error);
  return form;
}
