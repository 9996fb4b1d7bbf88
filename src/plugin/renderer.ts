/**
 * The rendermime factory for our mime type. Its renderer finds the notebook cell it sits
 * in and shows that cell's live widget; outside a cell (an output mirrored elsewhere) it
 * shows the static summary only.
 */
import { Cell } from '@jupyterlab/cells';
import type { IRenderMime } from '@jupyterlab/rendermime-interfaces';
import { PanelLayout, Widget } from '@lumino/widgets';
import { StepwellCellWidget } from '../ui/cell-widget';
import { el } from '../ui/dom';
import type { CellSummary } from '../ui/summary';
import { PROXY_NOTE, STEPWELL_MIME, fmt, shortPrint } from '../ui/summary';
import type { IStepwellCells } from './tokens';
import type { CellController } from '../ui/controller';
import { codeMirrorView, markProblems } from './editor-marks';

/** Class added to the cell widget of a stepwell cell. */
export const STEPWELL_CELL_CLASS = 'sw-mod-stepwell';

/** Rank of our factory: ahead of markdown, so Stepwell users see the live widget. */
const RANK = 20;

/** The nearest notebook cell among a widget's ancestors. */
export function findCell(widget: Widget): Cell | null {
  for (let w: Widget | null = widget.parent; w !== null; w = w.parent) if (w instanceof Cell) return w;
  return null;
}

function readSummary(data: unknown): CellSummary | null {
  if (typeof data !== 'object' || data === null) return null;
  const s = (data as { summary?: unknown }).summary;
  return typeof s === 'object' && s !== null && typeof (s as CellSummary).step === 'number' ? (s as CellSummary) : null;
}

/** The renderer of one stepwell output. */
export class StepwellRenderer extends Widget implements IRenderMime.IRenderer {
  private readonly cells: IStepwellCells;
  private view: StepwellCellWidget | null = null;
  private summary: CellSummary | null = null;

  /** @param cells - the registry that owns the controllers. */
  constructor(cells: IStepwellCells) {
    super();
    this.cells = cells;
    this.layout = new PanelLayout();
    this.addClass('sw-Renderer');
  }

  /** Takes the new bundle; the live view reads the cell itself, so only the fallback uses it. */
  async renderModel(model: IRenderMime.IMimeModel): Promise<void> {
    this.summary = readSummary(model.data[STEPWELL_MIME]);
    if (this.view === null && this.isAttached) this.bind();
  }

  /** Binds to the enclosing cell once the renderer is in the page. */
  protected onAfterAttach(): void {
    if (this.view === null) this.bind();
  }

  private bind(): void {
    const cell = findCell(this);
    const layout = this.layout as PanelLayout;
    if (cell === null || !this.cells.isStepwell(cell.model)) {
      this.node.replaceChildren(...staticSummary(this.summary));
      return;
    }
    cell.addClass(STEPWELL_CELL_CLASS);
    this.node.replaceChildren();
    const controller = this.cells.controllerFor(cell.model);
    this.view = new StepwellCellWidget({ controller });
    layout.addWidget(this.view);
    this.followProblems(cell, controller);
  }

  /** Mirrors the controller's spec problems as line marks in the cell's editor. */
  private followProblems(cell: Cell, controller: CellController): void {
    let shown = '';
    const update = (): void => {
      const problems = controller.state.problems;
      const key = JSON.stringify(problems);
      if (key === shown) return;
      const view = codeMirrorView(cell.editor);
      if (view === null) return;
      shown = key;
      markProblems(view, problems);
    };
    controller.changed.connect(update);
    this.disposed.connect(() => controller.changed.disconnect(update));
    update();
  }
}

/** Plain nodes for a summary shown outside its cell. */
function staticSummary(s: CellSummary | null): Node[] {
  const lines =
    s === null
      ? ['Stepwell experiment: no session yet.']
      : [`Stepwell experiment at step ${s.step}: training loss ${fmt(s.loss)}`, `${s.setup}; ${s.recipe}`, `fingerprint ${shortPrint(s.fingerprint)}`];
  return [...lines.map(t => el('div', 'sw-StaticLine', t)), el('p', 'sw-ProxyNote', PROXY_NOTE)];
}

/** Builds our rendermime factory. */
export function rendererFactory(cells: IStepwellCells): IRenderMime.IRendererFactory {
  return {
    safe: true,
    mimeTypes: [STEPWELL_MIME],
    defaultRank: RANK,
    createRenderer: () => new StepwellRenderer(cells)
  };
}
