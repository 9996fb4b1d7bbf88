/**
 * Stepwell's JupyterLab plugins. Each plugin object is small and hands off to named
 * functions: the registry of stepwell cells, the cell executor, the rendermime factory of
 * the live widget, and the commands with their settings.
 */
import type { JupyterFrontEnd, JupyterFrontEndPlugin } from '@jupyterlab/application';
import { ICommandPalette } from '@jupyterlab/apputils';
import { INotebookCellExecutor, INotebookTracker } from '@jupyterlab/notebook';
import { IRenderMimeRegistry } from '@jupyterlab/rendermime';
import { ISettingRegistry } from '@jupyterlab/settingregistry';
import type { CellSettings } from '../ui/ports';
import { DEFAULT_SETTINGS } from '../ui/ports';
import { LIMIT_NAMES } from '../experiment/limits';
import { spawnEngine } from '../worker/spawn';
import { figureImage } from '../ui/plot';
import { cellHost } from './cell-host';
import { notebookFileReader } from './notebook-files';
import { siteFileBytes } from './site-files';
import { addCommands } from './commands';
import { createExecutor } from './executor';
import { StepwellCells } from './registry';
import { rendererFactory } from './renderer';
import { IStepwellCells } from './tokens';
import { followCellLanguage } from './cell-language';
import { loadMagicInKernel } from './kernel';
import { addTakeDataCommand } from './take-command';
import { addAboutCommand } from './about';
import { followOpenedNotebooks } from './open-check';

/** The id of the plugin that owns schema/plugin.json (settings, toolbar, shortcuts). */
export const SETTINGS_PLUGIN_ID = 'stepwell:plugin';

/** Provides the registry of stepwell cells. */
const cellsPlugin: JupyterFrontEndPlugin<IStepwellCells> = {
  id: 'stepwell:cells',
  description: 'Keeps one controller per stepwell cell and the user settings; reads the files cells name through the contents API.',
  autoStart: true,
  provides: IStepwellCells,
  activate: (app: JupyterFrontEnd): IStepwellCells => {
    // The notebook tracker cannot be required here (it needs the cell executor, which needs this
    // plugin); the commands plugin hands over the path lookup and the open-check plugin the
    // tracker (for marking notebooks dirty) once it exists.
    const cells: StepwellCells = new StepwellCells(
      spawnEngine,
      model => cellHost(model, notebookFileReader(app.serviceManager.contents, () => cells.notebookPath(model), { maxBytes: () => cells.settings.limits.maxFileBytes, rawBytes: siteFileBytes }), () => cells.tracker),
      figureImage
    );
    return cells;
  }
};

/** Runs stepwell cells in our engine and every other cell as JupyterLab would. */
const executorPlugin: JupyterFrontEndPlugin<INotebookCellExecutor> = {
  id: 'stepwell:executor',
  description: 'Notebook cell executor: stepwell cells run in the Stepwell engine, other cells in the kernel.',
  autoStart: true,
  requires: [IStepwellCells],
  provides: INotebookCellExecutor,
  activate: (_app: JupyterFrontEnd, cells: IStepwellCells): INotebookCellExecutor => createExecutor(cells)
};

/** Renders our mime type as the live cell widget. */
const rendererPlugin: JupyterFrontEndPlugin<void> = {
  id: 'stepwell:renderer',
  description: 'Renders stepwell outputs as the live cell widget.',
  autoStart: true,
  requires: [IRenderMimeRegistry, IStepwellCells],
  activate: (_app: JupyterFrontEnd, rendermime: IRenderMimeRegistry, cells: IStepwellCells): void => {
    rendermime.addFactory(rendererFactory(cells));
  }
};

/** Commands, palette entries and settings. */
const commandsPlugin: JupyterFrontEndPlugin<void> = {
  id: SETTINGS_PLUGIN_ID,
  description: 'Stepwell commands (insert, step, run until, go to step, branches, compare, decision record, verify) and settings.',
  autoStart: true,
  requires: [INotebookTracker, IStepwellCells],
  optional: [ICommandPalette, ISettingRegistry],
  activate: (
    app: JupyterFrontEnd,
    tracker: INotebookTracker,
    cells: IStepwellCells,
    palette: ICommandPalette | null,
    settings: ISettingRegistry | null
  ): void => {
    addCommands(app, tracker, cells, palette);
    // Looked up at each read: a notebook can be renamed or moved while open.
    (cells as StepwellCells).findNotebookPath = model => tracker.find(p => p.model !== null && p.model.sharedModel === model.sharedModel.notebook)?.context.path ?? null;
    if (settings !== null) void followSettings(settings, cells as StepwellCells);
  }
};

/** Reads our settings and follows later changes. */
async function followSettings(registry: ISettingRegistry, cells: StepwellCells): Promise<void> {
  try {
    const settings = await registry.load(SETTINGS_PLUGIN_ID);
    const apply = (): void => {
      const c = settings.composite as Partial<Record<string, unknown>>;
      const pick = (k: Exclude<keyof CellSettings, 'limits'>): number => (typeof c[k] === 'number' ? (c[k] as number) : DEFAULT_SETTINGS[k]);
      const limits = { ...DEFAULT_SETTINGS.limits };
      for (const k of LIMIT_NAMES) if (typeof c[k] === 'number' && Number.isSafeInteger(c[k]) && (c[k] as number) >= 1) limits[k] = c[k] as number;
      cells.settings = {
        limits,
        maxLedgerBytes: pick('maxLedgerBytes'),
        defaultN: pick('defaultN'),
        checkpointEvery: pick('checkpointEvery'),
        checkpointCap: pick('checkpointCap'),
        auditSample: pick('auditSample'),
        noiseSample: pick('noiseSample'),
        denseHessianLimit: pick('denseHessianLimit'),
        eigenCount: pick('eigenCount'),
        kernelDataLimit: pick('kernelDataLimit')
      };
    };
    apply();
    settings.changed.connect(apply);
  } catch (error) {
    console.warn(`Stepwell: settings could not be loaded, using defaults (${String(error)})`);
  }
}

/** Stepwell cells beside a kernel: YAML editors, the %%stepwell magic loaded, data taken from the kernel. */
const kernelPlugin: JupyterFrontEndPlugin<void> = {
  id: 'stepwell:kernel',
  description: 'Highlights stepwell cells as YAML, loads the %%stepwell magic into Python kernels and takes arrays from the kernel.',
  autoStart: true,
  requires: [INotebookTracker, IStepwellCells],
  optional: [ICommandPalette],
  activate: (app: JupyterFrontEnd, tracker: INotebookTracker, cells: IStepwellCells, palette: ICommandPalette | null): void => {
    tracker.widgetAdded.connect((_, panel) => {
      followCellLanguage(panel, cells);
      loadMagicInKernel(panel, cells);
    });
    addTakeDataCommand(app, tracker, cells, palette, () => cells.settings.kernelDataLimit);
  }
};

/** "About Stepwell": Stepwell's own dialog, in the Help menu. */
const aboutPlugin: JupyterFrontEndPlugin<void> = {
  id: 'stepwell:about',
  description: 'Adds "About Stepwell" (version, what it is, the small-proxy caveat, its documentation) to the Help menu.',
  autoStart: true,
  optional: [ICommandPalette],
  activate: (app: JupyterFrontEnd, palette: ICommandPalette | null): void => addAboutCommand(app, palette)
};

/** Shows unreadable ledgers of stepwell cells that have no output when a notebook opens. */
const openCheckPlugin: JupyterFrontEndPlugin<void> = {
  id: 'stepwell:open-check',
  description: 'Reads the ledgers of stepwell cells without outputs when a notebook opens, so an unreadable one is shown in its cell.',
  autoStart: true,
  requires: [INotebookTracker, IStepwellCells],
  activate: (_app: JupyterFrontEnd, tracker: INotebookTracker, cells: IStepwellCells): void => {
    (cells as StepwellCells).tracker = tracker;
    followOpenedNotebooks(tracker, cells);
  }
};

const plugins: JupyterFrontEndPlugin<unknown>[] = [cellsPlugin, executorPlugin, rendererPlugin, commandsPlugin, kernelPlugin, aboutPlugin, openCheckPlugin];
export default plugins;
