/**
 * The registry of stepwell cells: which code cells are ours, and one controller per cell
 * model (shared by every view of that cell). Controllers follow their model's source
 * (debounced live spec check) and end with it.
 */
import type { ICellModel, ICodeCellModel } from '@jupyterlab/cells';
import type { INotebookTracker } from '@jupyterlab/notebook';
import { MAGIC_LINE, parseSpec } from '../experiment';
import { cellFileNames } from '../experiment/patch';
import { CellController, type ControllerDeps } from '../ui/controller';
import type { CellHost, CellSettings } from '../ui/ports';
import { DEFAULT_SETTINGS } from '../ui/ports';
import { LEDGER_KEY, workerLedgerGlue } from '../ui/ledger-glue';
import type { LedgerGlue } from '../ui/ports';
import type { SpecLimits } from '../experiment/limits';
import type { EngineClient } from '../worker/client';
import type { SpecProblem } from '../worker/protocol';
import type { IStepwellCells } from './tokens';

/**
 * The marker line: a code cell whose first line is a YAML comment starting with
 * "stepwell" (or "a stepwell …"), e.g. `# stepwell` or `# A stepwell experiment…`, is a
 * stepwell cell even before it has a ledger. So is a cell whose first line is the
 * `%%stepwell` magic line ({@link MAGIC_LINE}).
 */
export const MARKER = /^#\s*(a\s+)?stepwell\b/i;

/** True when the first line of `source` is the marker line or the magic line. */
export function hasMarker(source: string): boolean {
  if (MAGIC_LINE.test(source)) return true;
  // Only the first line is read: a spec with 10⁵ inline rows is not split on the page.
  const nl = source.indexOf('\n');
  const first = nl < 0 ? source : source.slice(0, nl);
  return MARKER.test(first.trim());
}

/**
 * The live spec check: every error of the parser (warnings are shown after a run), under
 * `limits`. Files the spec names are not read here (that happens when the engine starts, with
 * the problems of reading them placed at their keys).
 */
export function checkSpec(text: string, limits?: SpecLimits): SpecProblem[] {
  // Counted so the browser tests can tell the page never parses a spec (the reader worker does).
  performance.mark(PAGE_PARSE_MARK);
  const r = parseSpec(text, 'auto', { deferFiles: true, ...(limits === undefined ? {} : { limits }) });
  return r.ok ? [] : r.errors;
}

/** The user-timing mark set each time the page itself parses spec text (a fallback; normally never). */
export const PAGE_PARSE_MARK = 'stepwell:page-parse';

/** Milliseconds of quiet typing before the spec is re-checked. */
const CHECK_DELAY_MS = 300;

/** The {@link IStepwellCells} implementation. */
export class StepwellCells implements IStepwellCells {
  private readonly controllers = new Map<ICellModel, CellController>();
  private readonly engine: () => EngineClient;
  private readonly host: (model: ICodeCellModel) => CellHost;
  /** The notebook tracker, once the plugin that has it hands it over (used to mark notebooks dirty). */
  tracker: INotebookTracker | null = null;
  /** The current settings (replaced when the user changes them). */
  settings: CellSettings = { ...DEFAULT_SETTINGS };
  /** Finds the path of the notebook a cell model is in (set once the notebook tracker exists). */
  findNotebookPath: ((model: ICodeCellModel) => string | null) | null = null;

  private readonly imageOf: ControllerDeps['imageOf'];
  /** One worker for the page that opens stored ledgers (started on the first read). */
  private reader: EngineClient | null = null;
  private readonly glue: LedgerGlue;

  /**
   * @param engine - starts an engine for a new controller.
   * @param host - the cell door over a model (see `cell-host.ts`).
   * @param imageOf - turns a figure into an image for decision records (absent: records without image).
   */
  constructor(engine: () => EngineClient, host: (model: ICodeCellModel) => CellHost, imageOf?: ControllerDeps['imageOf']) {
    this.engine = engine;
    this.host = host;
    this.imageOf = imageOf;
    this.glue = workerLedgerGlue(() => this.readerClient());
  }

  /** The page's one reader worker (ledgers opened, specs checked), started on first use. */
  private readerClient(): EngineClient {
    return (this.reader ??= this.engine());
  }

  /** The contents path of the notebook holding `model`, or null when it is not known. */
  notebookPath(model: ICodeCellModel): string | null {
    return this.findNotebookPath?.(model) ?? null;
  }

  /** True for code cells with our metadata key or the marker line. */
  isStepwell(model: ICellModel): boolean {
    if (model.type !== 'code') return false;
    return model.getMetadata(LEDGER_KEY) !== undefined || hasMarker(model.sharedModel.getSource());
  }

  /** The controller of a stepwell cell, created on first use. */
  controllerFor(model: ICellModel): CellController {
    const known = this.controllers.get(model);
    if (known !== undefined && !known.isDisposed) return known;
    if (model.type !== 'code') throw new Error('a stepwell cell must be a code cell');
    // Our own ledger writes are not news; anyone else's (undo, a collaborator, a script) is.
    const inner = this.host(model as ICodeCellModel);
    let writing = false;
    const host: CellHost = {
      ...inner,
      writeLedger: value => {
        writing = true;
        try {
          inner.writeLedger(value);
        } finally {
          writing = false;
        }
      }
    };
    const controller = new CellController({
      host,
      engine: this.engine,
      ledger: this.glue,
      checkSpec: text => checkSpec(text, this.settings.limits),
      specFactsLater: async (text, chains) => {
        const reply = await this.readerClient().request({ kind: 'check', specText: text, limits: this.settings.limits, ...(chains === undefined ? {} : { chains: chains.map(c => [...c]) }) });
        if (reply.kind === 'checked') return { problems: reply.errors, files: reply.files };
        // The reader failed (it says why in the console): the page checks the text itself.
        return { problems: checkSpec(text, this.settings.limits), files: cellFileNames(text, chains) };
      },
      settings: () => this.settings,
      imageOf: this.imageOf
    });
    let timer: ReturnType<typeof setTimeout> | null = null;
    const onContent = (): void => {
      if (timer !== null) clearTimeout(timer);
      timer = setTimeout(() => {
        timer = null;
        if (!controller.isDisposed) void controller.sourceChanged();
      }, CHECK_DELAY_MS);
    };
    model.contentChanged.connect(onContent);
    const onMetadata = (_: ICellModel, change: { key: string }): void => {
      if (change.key === LEDGER_KEY && !writing && !controller.isDisposed && controller.state.busy === null) {
        void controller.readLedger();
      }
    };
    model.metadataChanged.connect(onMetadata);
    const onDisposed = (): void => {
      if (timer !== null) clearTimeout(timer);
      model.contentChanged.disconnect(onContent);
      model.metadataChanged.disconnect(onMetadata);
      controller.dispose();
      this.controllers.delete(model);
    };
    model.sharedModel.disposed.connect(onDisposed);
    this.controllers.set(model, controller);
    return controller;
  }
}
