/**
 * The branch bar of a stepwell cell: one entry per branch (name, where it forked, what it
 * changed against its parent, its step and loss) and the branch actions. A list with one tab
 * stop: arrow keys move between branches, Enter or Space shows the focused one. Plain DOM from
 * the worker's branch list; nothing is computed here.
 */
import type { BranchInfo } from '../worker/protocol';
import { button, el } from './dom';
import { rovingFocus } from './keyboard';
import { fmt } from './summary';

/** CSS classes of the branch bar. */
export namespace BranchBarClass {
  export const root = 'sw-BranchBar';
  export const list = 'sw-BranchList';
  export const item = 'sw-Branch';
  export const active = 'sw-mod-active';
  export const actions = 'sw-BranchActions';
}

/** What the bar's controls do. */
export interface BranchBarActions {
  switchTo(name: string): void;
  newBranch(): void;
  rename(): void;
  remove(name: string): void;
  discard(): void;
  compare(): void;
}

/** The text of one branch entry: name, origin and change, step and loss. */
export function branchLines(b: BranchInfo): { name: string; origin: string; state: string } {
  const origin = b.parent === null ? 'the spec as written' : `${b.restart ? 'restarts' : `from ${b.parent}@${b.forkStep}`} · ${b.patchText}`;
  const step = b.step < b.tip ? `step ${b.step} of ${b.tip}` : `step ${b.step}`;
  return { name: b.name, origin, state: `${step} · loss ${fmt(b.loss)}` };
}

/**
 * Builds the bar for `branches` with `active` shown.
 *
 * @param busy - disables every action while the engine works (a function: asked again at each
 *   click, so {@link lockBranchBar} can follow work starting and ending without a rebuild).
 * @param edited - the spec text was edited since the session started: no new branch (it would
 *   patch the old text) and no discarding until the cell is run again.
 */
export function branchBar(branches: readonly BranchInfo[], active: string, busy: boolean | (() => boolean), actions: BranchBarActions, edited = false): HTMLElement {
  const isBusy = typeof busy === 'function' ? busy : (): boolean => busy;
  const root = el('div', BranchBarClass.root);
  const list = el('div', BranchBarClass.list);
  list.setAttribute('role', 'listbox');
  list.setAttribute('aria-label', 'Branches of this experiment (arrow keys move, Enter shows)');
  list.setAttribute('aria-orientation', 'horizontal');
  const items = branches.map(b => {
    const t = branchLines(b);
    const item = el('div', `${BranchBarClass.item}${b.name === active ? ` ${BranchBarClass.active}` : ''}`);
    item.setAttribute('role', 'option');
    item.setAttribute('aria-selected', String(b.name === active));
    item.setAttribute('aria-label', `Branch ${t.name}, ${t.origin}, ${t.state}`);
    item.dataset.branch = b.name;
    item.title = b.parent === null ? `${b.name}: ${b.recipe}` : `${b.name}: ${b.recipe}\nforked from ${b.parent} at step ${b.forkStep} with ${b.patchText}`;
    item.append(el('span', 'sw-BranchName', t.name), el('span', 'sw-BranchOrigin', t.origin), el('span', 'sw-BranchState', t.state));
    const show = (): void => {
      if (!isBusy()) actions.switchTo(b.name);
    };
    item.addEventListener('click', show);
    item.addEventListener('keydown', (e: KeyboardEvent) => {
      if (e.key === 'Enter' || e.key === ' ') {
        e.preventDefault();
        show();
      } else if (e.key === 'Delete' && b.parent !== null && !isBusy()) {
        e.preventDefault();
        actions.remove(b.name);
      }
    });
    return item;
  });
  list.append(...items);
  rovingFocus(list, items, Math.max(0, branches.findIndex(b => b.name === active)), () => undefined);
  const bar = el('div', BranchBarClass.actions);
  const activeInfo = branches.find(b => b.name === active);
  const add = (label: string, title: string, onClick: () => void, cls: string, disabled: boolean): void => {
    const b = button(label, title, onClick, cls);
    b.disabled = isBusy() || disabled;
    // Kept so that work starting or ending can re-enable the bar in place (lockBranchBar).
    if (disabled) b.dataset.off = 'true';
    bar.appendChild(b);
  };
  add('New branch…', edited ? 'Run the cell first: the spec text was edited since this session started' : 'Fork a branch from a step of the shown branch with a changed recipe', actions.newBranch, 'sw-Button-branch', activeInfo === undefined || edited);
  add('Rename…', 'Rename the shown branch', actions.rename, 'sw-Button-rename', activeInfo === undefined);
  add('Delete…', 'Delete the shown branch and the branches forked from it (asks first)', () => activeInfo && actions.remove(activeInfo.name), 'sw-Button-delete', activeInfo?.parent === null || activeInfo === undefined);
  if (activeInfo !== undefined && activeInfo.step < activeInfo.tip) {
    add(`Discard steps ${activeInfo.step + 1}–${activeInfo.tip}…`, 'Drop the steps kept after the current step (asks first)', actions.discard, 'sw-Button-discard', edited);
  }
  add('Compare', 'Overlay the branches and compare them at matched steps', actions.compare, 'sw-Button-compare', branches.length < 2);
  root.append(list, bar);
  return root;
}

/** Disables (or re-enables) a branch bar's buttons in place as work starts (or ends); buttons off for other reasons stay off. */
export function lockBranchBar(root: HTMLElement, busy: boolean): void {
  for (const b of root.querySelectorAll<HTMLButtonElement>(`.${BranchBarClass.actions} button`)) b.disabled = busy || b.dataset.off === 'true';
}
