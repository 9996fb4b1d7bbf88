/**
 * The form of "Take Data from the Kernel": one text box per data role (x and y required, the
 * held-out pair optional) holding the names of arrays in the running kernel. The plugin shows it
 * in a dialog and reads it with `getValue()`.
 */
import { Widget } from '@lumino/widgets';
import type { TakeRole } from '../experiment/take';
import { el } from './dom';

/** Names by role as typed (trimmed; empty when left blank). */
export type TakeNames = Record<TakeRole, string>;

/** What each box asks for. */
const LABELS: Readonly<Record<TakeRole, string>> = {
  x: 'x: inputs, one row per example',
  y: 'y: targets (a 1-D array is one column)',
  'heldOut.x': 'held-out x (optional)',
  'heldOut.y': 'held-out y (optional)'
};

/** Class of the form. */
export const TAKE_FORM_CLASS = 'sw-TakeForm';

/** The form body. */
export class TakeForm extends Widget {
  private readonly inputs = new Map<TakeRole, HTMLInputElement>();

  /** @param initial - names to show at first (the last ones used). */
  constructor(initial: Partial<TakeNames>) {
    super();
    this.addClass(TAKE_FORM_CLASS);
    this.node.appendChild(el('p', 'sw-TakeForm-help', 'Names of NumPy arrays (or anything np.asarray reads) in the running kernel. Their values are copied into a new stepwell cell, so the notebook does not need the kernel afterwards.'));
    for (const role of Object.keys(LABELS) as TakeRole[]) {
      const label = el('label', 'sw-TakeForm-row');
      const input = document.createElement('input');
      input.type = 'text';
      input.spellcheck = false;
      input.dataset.role = role;
      input.value = initial[role] ?? '';
      input.placeholder = role === 'x' ? 'X_train' : role === 'y' ? 'y_train' : '';
      label.append(el('span', 'sw-TakeForm-label', LABELS[role]), input);
      this.node.appendChild(label);
      this.inputs.set(role, input);
    }
  }

  /** The names as typed, trimmed. */
  getValue(): TakeNames {
    const get = (role: TakeRole): string => this.inputs.get(role)?.value.trim() ?? '';
    return { x: get('x'), y: get('y'), 'heldOut.x': get('heldOut.x'), 'heldOut.y': get('heldOut.y') };
  }

  /** Focus the first box when shown. */
  protected onAfterAttach(): void {
    this.inputs.get('x')?.focus();
  }
}
