/**
 * The {@link CellHost} over a JupyterLab code-cell model: the one door through which
 * Stepwell reads and writes a cell (source, our metadata key, outputs).
 */
import type { ICodeCellModel } from '@jupyterlab/cells';
import type { INotebookTracker } from '@jupyterlab/notebook';
import type { IAttachments, IDisplayData } from '@jupyterlab/nbformat';
import type { ISharedMarkdownCell, ISharedNotebook } from '@jupyter/ydoc';
import type { PartialJSONObject, PartialJSONValue } from '@lumino/coreutils';
import type { CellHost, RecordCell } from '../ui/ports';
import { RECORD_KEY } from '../ui/decision-record';
import { LEDGER_KEY } from '../ui/ledger-glue';
import { UNREADABLE_KEY } from '../ui/controller';
import type { CellSummary } from '../ui/summary';
import { STEPWELL_MIME } from '../ui/summary';

/** The output a stepwell cell carries: our live-widget type plus a markdown fallback. */
export function stepwellOutput(summary: CellSummary | null, markdown: string): IDisplayData {
  return {
    output_type: 'display_data',
    data: { [STEPWELL_MIME]: { version: 2, summary } as unknown as PartialJSONObject, 'text/markdown': markdown },
    metadata: {}
  };
}

/** True when an output is ours. */
export function isStepwellOutput(data: Readonly<Record<string, unknown>>): boolean {
  return STEPWELL_MIME in data;
}

/** Index of the decision record of the cell with id `cellId` in `notebook`, or −1. */
export function recordIndex(notebook: ISharedNotebook, cellId: string): number {
  return notebook.cells.findIndex(c => {
    const meta = c.getMetadata(RECORD_KEY) as { cell?: unknown } | undefined;
    return c.cell_type === 'markdown' && typeof meta === 'object' && meta !== null && meta.cell === cellId;
  });
}

/**
 * Writes a decision record into `notebook` for the cell `cellId`: in place of its existing
 * record, or as a new markdown cell directly below it, in one transaction. No other cell changes.
 */
export function writeRecordCell(notebook: ISharedNotebook, cellId: string, record: RecordCell): void {
  const at = recordIndex(notebook, cellId);
  const attachments = record.attachments as unknown as IAttachments;
  notebook.transact(() => {
    if (at >= 0) {
      const cell = notebook.getCell(at) as ISharedMarkdownCell;
      cell.setSource(record.source);
      cell.setAttachments(Object.keys(attachments).length > 0 ? attachments : undefined);
      for (const [k, v] of Object.entries(record.metadata)) cell.setMetadata(k, v as PartialJSONValue);
      return;
    }
    const me = notebook.cells.findIndex(c => c.getId() === cellId);
    if (me < 0) throw new Error('the stepwell cell is no longer in the notebook; the decision record was not written');
    notebook.insertCell(me + 1, {
      cell_type: 'markdown',
      source: record.source,
      metadata: record.metadata as PartialJSONObject,
      ...(Object.keys(attachments).length > 0 ? { attachments } : {})
    });
  });
}

/** Marks the notebook that holds `model` dirty (JupyterLab then asks before a reload or close loses it). */
export function markNotebookDirty(tracker: INotebookTracker | null, model: ICodeCellModel): void {
  tracker?.forEach(panel => {
    const nb = panel.model;
    if (nb === null) return;
    for (let i = 0; i < nb.cells.length; i++) {
      if (nb.cells.get(i) === model) {
        nb.dirty = true;
        return;
      }
    }
  });
}

/**
 * Builds the cell host of a code-cell model.
 * @param readFiles - reads the files the spec names relative to the notebook (absent: none are read).
 * @param tracker - finds the cell's notebook (to mark it dirty during long runs).
 */
export function cellHost(model: ICodeCellModel, readFiles?: CellHost['readFiles'], tracker: () => INotebookTracker | null = () => null): CellHost {
  const notebook = (): ISharedNotebook => {
    const nb = model.sharedModel.notebook;
    if (nb === null) throw new Error('the stepwell cell is not in a notebook');
    return nb;
  };
  return {
    ...(readFiles === undefined ? {} : { readFiles }),
    cellId: () => model.sharedModel.getId() || null,
    findRecord: () => {
      const nb = model.sharedModel.notebook;
      const i = nb === null ? -1 : recordIndex(nb, model.sharedModel.getId());
      return i < 0 ? null : i;
    },
    writeRecord: record => writeRecordCell(notebook(), model.sharedModel.getId(), record),
    readSource: () => model.sharedModel.getSource(),
    readLedger: (): unknown => model.getMetadata(LEDGER_KEY),
    markDirty: () => markNotebookDirty(tracker(), model),
    hasOutput: () => model.outputs.length > 0 && isStepwellOutput(model.outputs.get(0).data),
    keepAside: (value: unknown): string => {
      model.setMetadata(UNREADABLE_KEY, { keptAt: new Date().toISOString(), value } as unknown as PartialJSONValue);
      return UNREADABLE_KEY;
    },
    writeLedger: (value: object) => model.setMetadata(LEDGER_KEY, value),
    writeOutputs: (summary, markdown) => {
      const output = stepwellOutput(summary, markdown);
      const outputs = model.outputs;
      // Replacing our single output in place lets the output area reuse the live widget.
      if (outputs.length === 1 && isStepwellOutput(outputs.get(0).data)) outputs.set(0, output);
      else {
        outputs.clear();
        outputs.add(output);
      }
    }
  };
}
