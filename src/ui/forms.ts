/**
 * The inline forms of the cell widget: "Run until…" and "Rewind…". Each returns its root
 * node; values are read from the inputs on submit and checked with exact messages.
 */
import type { StopCondition } from '../worker/protocol';
import { button, el } from './dom';

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

/** Builds the rewind form: a checkpoint list plus a free step number. */
export function rewindForm(
  checkpointSteps: number[],
  current: number,
  onRewind: (step: number) => void,
  onCancel: () => void
): HTMLElement {
  const form = el('div', 'sw-Form');
  const input = el('input', 'sw-Input');
  input.setAttribute('aria-label', 'rewind to step');
  const below = checkpointSteps.filter(s => s < current);
  input.value = String(below.length > 0 ? below[below.length - 1] : 0);
  const list = el('span', 'sw-Chips');
  for (const s of checkpointSteps) {
    if (s > current) continue;
    list.appendChild(button(String(s), `Rewind to the checkpoint at step ${s}`, () => onRewind(s), 'sw-Chip'));
  }
  const error = el('span', 'sw-FormError');
  const go = button('Rewind', 'Go back to this step (replayed from the nearest checkpoint)', () => {
    const step = readNumber(input.value, 'the step', true, 0);
    if (typeof step === 'string') {
      error.textContent = step;
      return;
    }
    if (step > current) {
      error.textContent = `the step must be at most the current step ${current}, got ${step}`;
      return;
    }
    onRewind(step);
  });
  form.append(el('span', 'sw-Label', 'Checkpoints:'), list, el('span', 'sw-Label', 'or step'), input, go,
    button('Cancel', 'Close this form', onCancel), error);
  return form;
}
