/**
 * The command "Take Data from the Kernel…": asks for array names, reads them from the
 * notebook's kernel, shows their shapes, and inserts a new stepwell cell below the active cell
 * with the values inline (and their content hash in `data.from`) or — the user's choice — saved
 * as `.npy` files next to the notebook through the contents API, the spec naming those files. Either
 * way the notebook stays reproducible without the kernel.
 */
import type { JupyterFrontEnd } from '@jupyterlab/application';
import { Dialog, showDialog, type ICommandPalette } from '@jupyterlab/apputils';
import type { INotebookTracker } from '@jupyterlab/notebook';
import { Widget } from '@lumino/widgets';
import { describeTaken, takenFileNames, takenNpy, takenSpecText, type TakeRole, type TakenArray, type TakenData } from '../experiment/take';
import { base64FromBytes } from '../ledger/base64';
import { el } from '../ui/dom';
import { TakeForm, type TakeNames } from '../ui/take-form';
import { takeArrays } from './kernel';
import type { IStepwellCells } from './tokens';

/** Id of the command. */
export const TAKE_DATA_COMMAND = 'stepwell:take-data';

/** A dialog body of plain lines. */
function lines(items: string[], className: string): Widget {
  const body = new Widget();
  body.addClass(className);
  for (const item of items) body.node.appendChild(el('p', `${className}-line`, item));
  return body;
}

/**
 * Registers the command and its palette entry.
 * @param limit - largest number of values per array (the setting `kernelDataLimit`), read at each use.
 */
export function addTakeDataCommand(
  app: JupyterFrontEnd,
  tracker: INotebookTracker,
  cells: IStepwellCells,
  palette: ICommandPalette | null,
  limit: () => number
): void {
  let last: Partial<TakeNames> = { x: '', y: '' };
  const kernelOf = () => tracker.currentWidget?.sessionContext.session?.kernel ?? null;
  app.commands.addCommand(TAKE_DATA_COMMAND, {
    label: 'Take Data from the Kernel…',
    caption: 'Copy named NumPy arrays from the running kernel into a new stepwell cell below the active cell',
    isEnabled: () => kernelOf() !== null,
    execute: async () => {
      const panel = tracker.currentWidget;
      const kernel = kernelOf();
      if (panel === null || kernel === null) {
        await showDialog({ title: 'No kernel', body: 'This notebook has no running kernel: start one (Kernel › Change Kernel…) and define the arrays first.', buttons: [Dialog.okButton()] });
        return;
      }
      const form = await showDialog({
        title: 'Take Data from the Kernel',
        body: new TakeForm(last),
        buttons: [Dialog.cancelButton(), Dialog.okButton({ label: 'Read Arrays' })],
        focusNodeSelector: 'input'
      });
      if (!form.button.accept || form.value === null) return;
      last = form.value;
      const outcome = await takeArrays(kernel, form.value, limit());
      if (!outcome.ok) {
        await showDialog({ title: 'The arrays cannot be taken', body: lines(outcome.problems, 'sw-TakeProblems'), buttons: [Dialog.okButton()] });
        return;
      }
      const total = outcome.arrays.reduce((n, a) => n + a.values.length, 0);
      const confirm = await showDialog({
        title: 'Insert a Stepwell Cell with These Arrays?',
        body: lines([...outcome.arrays.map(describeTaken), `${total} numbers: inline in the new cell's spec with their SHA-256, or saved as .npy files next to the notebook (better for large arrays; the spec names the files).`], 'sw-TakeShapes'),
        buttons: [Dialog.cancelButton(), Dialog.okButton({ label: 'Save as .npy Files', displayType: 'default', actions: ['npy'] }), Dialog.okButton({ label: 'Insert Inline' })]
      });
      if (!confirm.button.accept || panel.isDisposed || panel.model === null) return;
      let where: TakenData = { kind: 'inline' };
      if (confirm.button.actions.includes('npy')) {
        const saved = await saveTakenFiles(app, panel.context.path, outcome.arrays);
        if (typeof saved === 'string') {
          await showDialog({ title: 'The arrays were not saved', body: saved, buttons: [Dialog.okButton()] });
          return;
        }
        where = { kind: 'files', names: saved };
      }
      await insertTakenCell(panel, cells, outcome.arrays, where);
    }
  });
  palette?.addItem({ command: TAKE_DATA_COMMAND, category: 'Stepwell' });
}

/**
 * Saves each array as a `.npy` file in the notebook's folder (never over an existing file).
 * @returns the file name by role, or a sentence saying what failed.
 */
async function saveTakenFiles(app: JupyterFrontEnd, notebookPath: string, arrays: TakenArray[]): Promise<Map<TakeRole, string> | string> {
  const contents = app.serviceManager.contents;
  const folder = notebookPath.includes('/') ? notebookPath.slice(0, notebookPath.lastIndexOf('/') + 1) : '';
  let listing: Set<string>;
  try {
    const dir = await contents.get(folder === '' ? '' : folder.slice(0, -1), { content: true, type: 'directory' });
    listing = new Set((Array.isArray(dir.content) ? (dir.content as { name: string }[]) : []).map(f => f.name));
  } catch (error) {
    return `The notebook's folder could not be listed: ${(error as Error).message}`;
  }
  const names = takenFileNames(arrays, n => listing.has(n));
  for (const a of arrays) {
    const name = names.get(a.role) as string;
    try {
      await contents.save(folder + name, { type: 'file', format: 'base64', content: base64FromBytes(takenNpy(a)) });
    } catch (error) {
      return `${folder + name} could not be saved: ${(error as Error).message}`;
    }
  }
  return names;
}

async function insertTakenCell(panel: NonNullable<INotebookTracker['currentWidget']>, cells: IStepwellCells, arrays: TakenArray[], where: TakenData): Promise<void> {
  const notebook = panel.content;
  const index = notebook.activeCellIndex + 1;
  const source = takenSpecText(arrays, new Date().toISOString().slice(0, 10), where);
  panel.model?.sharedModel.insertCell(index, { cell_type: 'code', source, metadata: {} });
  notebook.activeCellIndex = index;
  const cell = notebook.activeCell;
  if (cell !== null) await cells.controllerFor(cell.model).run();
}
