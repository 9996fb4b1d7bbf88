/**
 * The branch forms of the cell widget: a new branch (step, patch text with line-level problems,
 * name), renaming, the decision record's question and choice, and the confirmation bar shown
 * before work is lost. Each returns its root node; values are read on submit.
 */
import type { BranchInfo, SpecProblem } from '../worker/protocol';
import { button, el, replaceChildren } from './dom';
import { readNumber } from './forms';
import { problemLine } from './summary';
import type { Confirmation } from './view-state';

/** Example text shown in the empty patch box. */
export const PATCH_HINT = 'one spec key per line, e.g.\nlr: 0.05\nmomentum: 0.9\nmodel.init: he-normal   (setup keys fork at step 0)';

/** Inputs of {@link branchForm}. */
export interface BranchFormInput {
  from: string;
  /** The shown branch's cursor, its furthest step, its first step and its checkpoint steps. */
  step: number;
  tip: number;
  first: number;
  checkpoints: readonly number[];
  onInput(text: string): void;
  onSubmit(text: string, step: number, name: string): void;
  onCancel(): void;
}

/** The new-branch form; `setProblems` shows the live check of the patch text. */
export function branchForm(input: BranchFormInput): { node: HTMLElement; setProblems(problems: readonly SpecProblem[]): void } {
  const form = el('div', 'sw-Form sw-BranchForm');
  form.setAttribute('role', 'group');
  form.setAttribute('aria-label', `New branch from ${input.from}`);
  const step = el('input', 'sw-Input sw-BranchStep');
  step.setAttribute('aria-label', `fork at step (${input.first} to ${input.tip})`);
  step.value = String(input.step);
  const chips = el('span', 'sw-Chips');
  for (const s of input.checkpoints) {
    if (s > input.tip) continue;
    const chip = button(String(s), `Fork at the checkpoint at step ${s}`, () => (step.value = String(s)), 'sw-Chip');
    chips.appendChild(chip);
  }
  const text = el('textarea', 'sw-PatchText');
  text.setAttribute('aria-label', 'patch: one spec key per line');
  text.rows = 4;
  text.placeholder = PATCH_HINT;
  text.spellcheck = false;
  const name = el('input', 'sw-Input sw-BranchName-input');
  name.setAttribute('aria-label', 'branch name (optional)');
  name.placeholder = 'name (optional)';
  const problems = el('ul', 'sw-Problems sw-PatchProblems');
  problems.setAttribute('role', 'alert');
  problems.hidden = true;
  const error = el('span', 'sw-FormError');
  let timer: number | null = null;
  text.addEventListener('input', () => {
    if (timer !== null) window.clearTimeout(timer);
    timer = window.setTimeout(() => input.onInput(text.value), 200);
  });
  const go = button('Make branch', 'Fork the branch at this step with the patch and step it from there', () => {
    const at = readNumber(step.value, 'the step', true, 0);
    if (typeof at === 'string') {
      error.textContent = at;
      return;
    }
    if (at < input.first || at > input.tip) {
      error.textContent = `the step must be between ${input.first} and ${input.tip}, got ${at}`;
      return;
    }
    error.textContent = '';
    input.onSubmit(text.value, at, name.value);
  }, 'sw-Button-make');
  const row1 = el('div', 'sw-FormRow');
  row1.append(el('span', 'sw-Label', `From ${input.from} at step`), step, chips);
  const row2 = el('div', 'sw-FormRow');
  row2.append(text);
  const row3 = el('div', 'sw-FormRow');
  row3.append(name, go, button('Cancel', 'Close this form', input.onCancel), error);
  form.append(row1, row2, problems, row3);
  return {
    node: form,
    setProblems(list) {
      replaceChildren(problems, list.map(p => el('li', 'sw-Problem', problemLine(p))));
      problems.hidden = list.length === 0;
    }
  };
}

/** The rename form of branch `name`. */
export function renameForm(name: string, onRename: (to: string) => void, onCancel: () => void): HTMLElement {
  const form = el('div', 'sw-Form');
  const input = el('input', 'sw-Input sw-RenameInput');
  input.setAttribute('aria-label', `new name of branch ${name}`);
  input.value = name;
  form.append(el('span', 'sw-Label', `Rename ${name} to`), input,
    button('Rename', 'Rename the branch', () => onRename(input.value), 'sw-Button-doRename'), button('Cancel', 'Close this form', onCancel));
  return form;
}

/** The question a decision record starts with, before the user edits it. */
export function defaultQuestion(branches: readonly BranchInfo[]): string {
  const forks = branches.filter(b => b.parent !== null);
  if (forks.length === 0) return 'Is this recipe good enough to carry to the full-scale run?';
  const keys = [...new Set(forks.flatMap(b => Object.keys(b.patch)))];
  return `Which ${keys.length > 0 ? keys.join(' / ') : 'recipe'} should the full-scale run use?`;
}

/** The decision-record form: the question (prefilled) and the chosen branch. */
export function recordForm(branches: readonly BranchInfo[], chosen: string, onWrite: (question: string, chosen: string) => void, onCancel: () => void): HTMLElement {
  const form = el('div', 'sw-Form sw-RecordForm');
  form.setAttribute('role', 'group');
  form.setAttribute('aria-label', 'Decision record');
  const q = el('input', 'sw-Input sw-RecordQuestion');
  q.setAttribute('aria-label', 'the question the record answers');
  q.value = defaultQuestion(branches);
  const pick = el('select', 'sw-Select sw-RecordChoice');
  pick.setAttribute('aria-label', 'chosen branch');
  for (const b of branches) {
    const o = el('option', undefined, b.parent === null ? b.name : `${b.name} (${b.patchText})`);
    o.value = b.name;
    pick.appendChild(o);
  }
  pick.value = chosen;
  form.append(el('span', 'sw-Label', 'Question'), q, el('span', 'sw-Label', 'chosen'), pick,
    button('Write record', 'Write the decision record as a markdown cell below this cell', () => onWrite(q.value, pick.value), 'sw-Button-writeRecord'),
    button('Cancel', 'Close this form', onCancel));
  return form;
}

/**
 * The bar asking before work is lost: the question, then Yes / Keep; replacing an unreadable
 * ledger also offers to keep a copy of it first (`onKeepCopy`).
 */
export function confirmBar(c: Confirmation, onYes: () => void, onNo: () => void, onKeepCopy?: () => void): HTMLElement {
  const bar = el('div', 'sw-Confirm');
  bar.setAttribute('role', 'alertdialog');
  bar.setAttribute('aria-label', 'Confirm');
  const yes = button(c.kind === 'replace-record' ? 'Replace' : c.kind === 'reset' || c.kind === 'replace-ledger' ? 'Start over' : c.kind === 'delete' ? 'Delete' : 'Discard', 'Go ahead', onYes, 'sw-Button-confirm');
  const no = button(c.kind === 'replace-ledger' ? 'Cancel' : 'Keep', 'Do nothing', onNo, 'sw-Button-keep');
  bar.append(el('span', 'sw-ConfirmText', c.text));
  if (c.kind === 'replace-ledger' && c.canKeep && onKeepCopy !== undefined)
    bar.append(button('Keep a copy, start over', 'Move the unreadable ledger to another metadata key of this cell, then start over', onKeepCopy, 'sw-Button-keepCopy'));
  bar.append(yes, no);
  return bar;
}
