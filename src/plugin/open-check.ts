/**
 * On notebook open, the stepwell cells that carry a ledger but no output get a controller, so
 * their ledger is read (in the worker) and an unreadable one is shown in the cell: without an
 * output there would be no widget to say so. Cells with our output are read by their widget.
 */
import type { INotebookTracker, NotebookPanel } from '@jupyterlab/notebook';
import { LEDGER_KEY } from '../ui/ledger-glue';
import type { IStepwellCells } from './tokens';

/** Reads the ledgers of output-less stepwell cells of `panel` once its model is ready. */
export function checkOutputlessLedgers(panel: NotebookPanel, cells: IStepwellCells): void {
  void panel.context.ready.then(() => {
    const model = panel.content.model;
    if (model === null) return;
    for (let i = 0; i < model.cells.length; i++) {
      const cell = model.cells.get(i);
      if (cell.type !== 'code' || cell.getMetadata(LEDGER_KEY) === undefined || !cells.isStepwell(cell)) continue;
      const outputs = (cell as unknown as { outputs: { length: number } }).outputs;
      if (outputs.length === 0) cells.controllerFor(cell);
    }
  });
}

/** Follows every notebook the tracker adds. */
export function followOpenedNotebooks(tracker: INotebookTracker, cells: IStepwellCells): void {
  tracker.forEach(panel => checkOutputlessLedgers(panel, cells));
  tracker.widgetAdded.connect((_, panel) => checkOutputlessLedgers(panel, cells));
}
