/**
 * Commands of Stepwell. Ids live in {@link CommandIDs}; toolbar buttons and keyboard
 * shortcuts are declared in schema/plugin.json.
 */
import type { JupyterFrontEnd } from '@jupyterlab/application';
import type { ICommandPalette } from '@jupyterlab/apputils';
import type { INotebookTracker } from '@jupyterlab/notebook';
import { TEMPLATE_SPEC } from '../experiment';
import type { CellController } from '../ui/controller';
import { hasMarker } from './registry';
import { stepIcon, stepwellIcon } from './icons';
import type { IStepwellCells } from './tokens';

/** Command ids. */
export namespace CommandIDs {
  export const insertCell = 'stepwell:insert-cell';
  export const step = 'stepwell:step';
  export const stepN = 'stepwell:step-n';
  export const runUntil = 'stepwell:run-until';
  export const stop = 'stepwell:stop';
  export const reset = 'stepwell:reset';
  export const rewind = 'stepwell:rewind';
  export const verify = 'stepwell:verify';
  export const audit = 'stepwell:audit';
  export const curvature = 'stepwell:curvature';
  export const newBranch = 'stepwell:new-branch';
  export const compare = 'stepwell:compare';
  export const decisionRecord = 'stepwell:decision-record';
  export const discardLater = 'stepwell:discard-later';
}

/** The text of a new stepwell cell (the template, with the marker line guaranteed). */
export function newCellSource(): string {
  return hasMarker(TEMPLATE_SPEC) ? TEMPLATE_SPEC : `# stepwell\n${TEMPLATE_SPEC}`;
}

/** Registers every command and its palette entry. */
export function addCommands(
  app: JupyterFrontEnd,
  tracker: INotebookTracker,
  cells: IStepwellCells,
  palette: ICommandPalette | null
): void {
  const { commands } = app;
  /** The controller of the active cell when it is a stepwell cell. */
  const active = (): CellController | null => {
    const cell = tracker.activeCell;
    if (cell === null || !cells.isStepwell(cell.model)) return null;
    return cells.controllerFor(cell.model);
  };
  const onStepwell = { isEnabled: () => active() !== null, isVisible: () => active() !== null };
  const idle = { isEnabled: () => { const c = active(); return c !== null && c.state.busy === null && c.state.summary !== null; }, isVisible: onStepwell.isVisible };

  commands.addCommand(CommandIDs.insertCell, {
    label: 'Insert Stepwell Cell',
    caption: 'Insert a stepwell experiment cell below the active cell and start its session',
    icon: stepwellIcon,
    isEnabled: () => tracker.currentWidget !== null,
    execute: async () => {
      const panel = tracker.currentWidget;
      if (panel === null || panel.model === null) return;
      const notebook = panel.content;
      const index = notebook.activeCellIndex + 1;
      panel.model.sharedModel.insertCell(index, { cell_type: 'code', source: newCellSource(), metadata: {} });
      notebook.activeCellIndex = index;
      const cell = notebook.activeCell;
      if (cell !== null) await cells.controllerFor(cell.model).run();
    }
  });
  commands.addCommand(CommandIDs.step, {
    label: 'Step Once',
    caption: 'Apply one optimizer update in the active stepwell cell',
    icon: stepIcon,
    ...idle,
    execute: () => active()?.step(1)
  });
  commands.addCommand(CommandIDs.stepN, {
    label: () => `Step ×${active()?.defaultN ?? cells.settings.defaultN}`,
    caption: 'Apply N optimizer updates (N from the cell’s Step ×N box, else the settings) in the active stepwell cell',
    ...idle,
    execute: () => active()?.step()
  });
  commands.addCommand(CommandIDs.runUntil, {
    label: 'Run Until…',
    caption: 'Open the run-until form of the active stepwell cell',
    ...idle,
    execute: () => active()?.setForm('run-until')
  });
  commands.addCommand(CommandIDs.stop, {
    label: 'Stop Stepping',
    caption: 'End the running work of the active stepwell cell early',
    isEnabled: () => (active()?.state.busy ?? null) !== null,
    isVisible: onStepwell.isVisible,
    execute: () => active()?.stop()
  });
  commands.addCommand(CommandIDs.reset, {
    label: 'Reset to Step 0…',
    caption: 'Start the active stepwell cell again at step 0 from its spec text (asks before discarding steps or branches)',
    ...onStepwell,
    execute: () => active()?.reset()
  });
  commands.addCommand(CommandIDs.rewind, {
    label: 'Go to Step…',
    caption: 'Open the go-to-step form (checkpoints or any recorded step; later steps are kept) of the active stepwell cell',
    ...idle,
    execute: () => active()?.setForm('rewind')
  });
  commands.addCommand(CommandIDs.verify, {
    label: 'Verify by Replay',
    caption: 'Replay the active stepwell cell from its seed and compare bit for bit',
    ...idle,
    execute: () => active()?.verify()
  });
  commands.addCommand(CommandIDs.audit, {
    label: 'Audit Gradient',
    caption: 'Compare the exact gradient with finite differences in the active stepwell cell',
    ...idle,
    execute: () => active()?.audit()
  });
  commands.addCommand(CommandIDs.curvature, {
    label: 'Measure Curvature',
    caption: 'Compute the extreme Hessian eigenvalues and the step-size stability limit in the active stepwell cell',
    ...idle,
    execute: () => active()?.measureCurvature()
  });
  commands.addCommand(CommandIDs.newBranch, {
    label: 'New Branch…',
    caption: 'Fork a branch of the active stepwell cell at a step with a changed recipe',
    ...idle,
    execute: () => active()?.setForm('branch')
  });
  commands.addCommand(CommandIDs.compare, {
    label: 'Compare Branches',
    caption: 'Overlay the branches of the active stepwell cell and compare them at matched steps',
    ...idle,
    execute: () => active()?.setTab('compare')
  });
  commands.addCommand(CommandIDs.decisionRecord, {
    label: 'Write Decision Record…',
    caption: 'Write a markdown cell below the active stepwell cell with the question, the evidence and the chosen recipe',
    ...idle,
    execute: () => active()?.setForm('record')
  });
  commands.addCommand(CommandIDs.discardLater, {
    label: 'Discard Later Steps…',
    caption: 'Drop the steps the shown branch keeps after its current step (asks first)',
    isEnabled: () => {
      const s = active()?.state;
      return s !== undefined && s.busy === null && s.summary !== null && s.summary.step < s.summary.tip;
    },
    isVisible: onStepwell.isVisible,
    execute: () => active()?.discardLater()
  });
  if (palette !== null) {
    for (const command of Object.values(CommandIDs)) palette.addItem({ command, category: 'Stepwell' });
  }
}
