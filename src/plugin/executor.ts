/**
 * The notebook cell executor: stepwell cells run in our engine, never in the kernel; every
 * other cell goes to JupyterLab's own `runCell`.
 */
import type { INotebookCellExecutor } from '@jupyterlab/notebook';
import { runCell } from '@jupyterlab/notebook';
import type { IStepwellCells } from './tokens';

/** Builds the executor over the stepwell-cell registry. */
export function createExecutor(cells: IStepwellCells): INotebookCellExecutor {
  return Object.freeze({
    async runCell(options: INotebookCellExecutor.IRunCellOptions): Promise<boolean> {
      const { cell } = options;
      if (!cells.isStepwell(cell.model)) return runCell(options);
      options.onCellExecutionScheduled({ cell });
      let success = false;
      try {
        success = await cells.controllerFor(cell.model).run();
      } finally {
        options.onCellExecuted({ cell, success });
      }
      return success;
    }
  });
}
