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

/** The conditions the run-until form offers. */
export type FormCondition = 'loss-below' | 'grad-norm-below' | 'diverged';

/** The threshold each condition starts with: a small loss or gradient norm, a thousandfold rise of the loss. */
export const CONDITION_DEFAULTS: Readonly<Record<FormCondition, number>> = { 'loss-below': 1e-3, 'grad-norm-below': 1e-3, diverged: 1e3 };

/** A stop condition in words, e.g. `training loss ≤ 0.001` or `loss above 1000 × its start`. */
export function conditionText(c: StopCondition): string {
  switch (c.kind) {
    case 'loss-below':
      return `training loss ≤ ${c.value}`;
    case 'grad-norm-below':
      return `gradient norm ≤ ${c.value}`;
    case 'diverged':
      return `loss above ${c.factor ?? CONDITION_DEFAULTS.diverged} × its start`;
    case 'steps':
      return `${c.count} steps`;
    default: {
      const never: never = c;
      throw new Error(`unknown stop condition ${JSON.stringify(never)}`);
    }
  }
}

/**
 * The threshold box's text after the condition changes to `kind`: what was last typed for that
 * condition, else its default (a loss threshold of 0.001 means nothing as a growth factor).
 */
export function thresholdText(kind: FormCondition, typed: Readonly<Partial<Record<FormCondition, string>>>): string {
  return typed[kind] ?? String(CONDITION_DEFAULTS[kind]);
}

/**
 * The stop condition of the form's values, or a message naming the bad value. A growth factor
 * must exceed 1: at or below it the loss "grows above × start" without growing at all.
 */
export function readCondition(kind: FormCondition, text: string): StopCondition | string {
  const v = readNumber(text, kind === 'diverged' ? 'the factor' : 'the threshold', false, 0);
  if (typeof v === 'string') return v;
  switch (kind) {
    case 'diverged':
      return v > 1 ? { kind: 'diverged', factor: v } : `the factor must be above 1 (the loss grows above factor × its value at the start of the run), got ${text.trim()}`;
    case 'grad-norm-below':
      return { kind: 'grad-norm-below', value: v };
    case 'loss-below':
      return { kind: 'loss-below', value: v };
  }
}

/** A stop condition's problem before a run, or null (the same check the form makes, for every caller). */
export function conditionProblem(c: StopCondition): string | null {
  if (c.kind === 'diverged' && !((c.factor ?? CONDITION_DEFAULTS.diverged) > 1)) {
    return `the factor must be above 1 (the loss grows above factor × its value at the start of the run), got ${String(c.factor)}`;
  }
  return null;
}

/** Builds the run-until form. */
export function runUntilForm(
  initial: { condition: StopCondition; maxSteps: number },
  onRun: (condition: StopCondition, maxSteps: number) => void,
  onCancel: () => void
): HTMLElement {
  const form = el('div', 'sw-Form');
  const kind = el('select', 'sw-Select sw-UntilKind');
  kind.setAttribute('aria-label', 'stop condition');
  const options: [FormCondition, string][] = [
    ['loss-below', 'training loss ≤'],
    ['grad-norm-below', 'gradient norm ≤'],
    ['diverged', 'loss grows above × start']
  ];
  for (const [value, label] of options) {
    const o = el('option', undefined, label);
    o.value = value;
    kind.appendChild(o);
  }
  const c = initial.condition;
  const start: FormCondition = c.kind === 'steps' ? 'loss-below' : c.kind;
  kind.value = start;
  const value = el('input', 'sw-Input sw-UntilValue');
  value.setAttribute('aria-label', 'threshold');
  // What was typed per condition, so switching back and forth never carries a number across.
  const typed: Partial<Record<FormCondition, string>> = { [start]: String(c.kind === 'diverged' ? c.factor ?? CONDITION_DEFAULTS.diverged : c.kind === 'steps' ? CONDITION_DEFAULTS['loss-below'] : c.value) };
  value.value = thresholdText(start, typed);
  let shown: FormCondition = start;
  kind.addEventListener('change', () => {
    typed[shown] = value.value;
    shown = kind.value as FormCondition;
    value.value = thresholdText(shown, typed);
  });
  const max = el('input', 'sw-Input');
  max.setAttribute('aria-label', 'most steps');
  max.value = String(initial.maxSteps);
  const error = el('span', 'sw-FormError');
  error.setAttribute('role', 'alert');
  const go = button('Run', 'Start stepping until the condition holds', () => {
    const condition = readCondition(kind.value as FormCondition, value.value);
    const steps = readNumber(max.value, 'most steps', true, 1);
    if (typeof condition === 'string' || typeof steps === 'string') {
      error.textContent = typeof condition === 'string' ? condition : String(steps);
      return;
    }
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
