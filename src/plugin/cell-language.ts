/**
 * How a stepwell cell's editor reads: its text is highlighted as YAML (not as the notebook's
 * kernel language), and a leading `%%stepwell` line is shown greyed, as it is only there for a
 * Python kernel. Nothing here changes the notebook: a cell's mime type is not saved.
 */
import type { Cell } from '@jupyterlab/cells';
import type { ICellModel } from '@jupyterlab/cells';
import type { NotebookPanel } from '@jupyterlab/notebook';
import { StateEffect, StateField, type EditorState } from '@codemirror/state';
import { Decoration, EditorView, type DecorationSet } from '@codemirror/view';
import { MAGIC_LINE } from '../experiment';
import { codeMirrorView } from './editor-marks';
import type { IStepwellCells } from './tokens';

/** The mime type JupyterLab's language registry maps to YAML. */
export const YAML_MIME = 'text/x-yaml';
/** Class of the greyed magic line. */
export const MAGIC_LINE_CLASS = 'sw-mod-magicLine';

function magicDecorations(state: EditorState): DecorationSet {
  const first = state.doc.line(1);
  if (!MAGIC_LINE.test(first.text)) return Decoration.none;
  const title = 'Lets a Python kernel pass over this cell (the %%stepwell magic of `pip install stepwell`); Stepwell ignores this line.';
  return Decoration.set([Decoration.line({ class: MAGIC_LINE_CLASS, attributes: { title } }).range(first.from)]);
}

/** Decorates line 1 when it is the magic line; recomputed on every edit (one line is read). */
const magicField = StateField.define<DecorationSet>({
  create: magicDecorations,
  update: (value, tr) => (tr.docChanged ? magicDecorations(tr.state) : value),
  provide: field => EditorView.decorations.from(field)
});

/** Installs the magic-line decoration in a cell's editor once it exists. */
async function markMagicLine(cell: Cell): Promise<void> {
  await cell.ready;
  const view = codeMirrorView(cell.editor);
  if (view !== null && view.state.field(magicField, false) === undefined) {
    view.dispatch({ effects: StateEffect.appendConfig.of(magicField) });
  }
}

/**
 * Keeps every stepwell cell of a notebook in YAML mode, also after JupyterLab resets code cells
 * to the kernel's language, and returns a cell to the notebook's language when it stops being
 * a stepwell cell. Only cells switched here are switched back.
 */
export function followCellLanguage(panel: NotebookPanel, cells: IStepwellCells): void {
  const notebook = panel.content;
  const ours = new WeakSet<ICellModel>();
  const watched = new WeakSet<ICellModel>();
  const apply = (model: ICellModel): void => {
    if (model.isDisposed || model.type !== 'code') return;
    if (cells.isStepwell(model)) {
      ours.add(model);
      if (model.mimeType !== YAML_MIME) model.mimeType = YAML_MIME;
    } else if (ours.has(model)) {
      ours.delete(model);
      if (model.mimeType === YAML_MIME) model.mimeType = notebook.codeMimetype;
    }
  };
  const scan = (): void => {
    for (const cell of notebook.widgets) {
      const model = cell.model;
      if (model.type !== 'code') continue;
      apply(model);
      if (watched.has(model)) continue;
      watched.add(model);
      model.contentChanged.connect(() => apply(model));
      model.mimeTypeChanged.connect(() => apply(model));
      void markMagicLine(cell);
    }
  };
  void panel.context.ready.then(() => {
    if (panel.isDisposed || notebook.model === null) return;
    scan();
    notebook.model.cells.changed.connect(scan);
  });
}
