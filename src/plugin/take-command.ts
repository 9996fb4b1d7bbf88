/**
 * The command "Take Data from the Kernel…": asks for array names, reads them from the
 * notebook's kernel, shows their shapes, and inserts a new stepwell cell below the active cell
 * with the values inline (so the notebook stays reproducible without the kernel) and their
 * content hash in `data.from`.
 */
import type { JupyterFrontEnd } from '@jupyterlab/application';
import { Dialog, showDialog, type ICommandPalette } from '@jupyterlab/apputils';
import type { INotebookTracker } from '@jupyterlab/notebook';
import { Widget } from '@lumino/widgets';
import { describeTaken, takenSpecText, type TakenArray } from '../experiment/take';
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
        body: lines([...outcome.arrays.map(describeTaken), `${total} numbers, stored inline in the new cell's spec with their SHA-256.`], 'sw-TakeShapes'),
        buttons: [Dialog.cancelButton(), Dialog.okButton({ label: 'Insert Cell' })]
      });
      if (!confirm.button.accept || panel.isDisposed || panel.model === null) return;
      await insertTakenCell(panel, cells, outcome.arrays);
    }
  });
  palette?.addItem({ command: TAKE_DATA_COMMAND, category: 'Stepwell' });
}

async function insertTakenCell(panel: NonNullable<INotebookTracker['currentWidget']>, cells: IStepwellCells, arrays: TakenArray[]): Promise<void> {
  const notebook = panel.content;
  const index = notebook.activeCellIndex + 1;
  const source = takenSpecText(arrays, new Date().toISOString().slice(0, 10));
  panel.model?.sharedModel.insertCell(index, { cell_type: 'code', source, metadata: {} });
  notebook.activeCellIndex = index;
  const cell = notebook.activeCell;
  if (cell !== null) await cells.controllerFor(cell.model).run();
}
