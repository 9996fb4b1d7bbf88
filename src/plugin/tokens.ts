/**
 * Tokens of the Stepwell plugins. Interface and token share a name.
 */
import { Token } from '@lumino/coreutils';
import type { ICellModel } from '@jupyterlab/cells';
import type { CellController } from '../ui/controller';
import type { CellSettings } from '../ui/ports';

/** The registry of stepwell cells: one controller per cell model. */
export interface IStepwellCells {
  /** True when the cell model is a stepwell cell (our metadata key or the marker line). */
  isStepwell(model: ICellModel): boolean;
  /** The controller of a stepwell cell, created on first use. */
  controllerFor(model: ICellModel): CellController;
  /** The current settings. */
  readonly settings: CellSettings;
}

/** The stepwell-cell registry token. */
export const IStepwellCells = new Token<IStepwellCells>(
  'stepwell:IStepwellCells',
  'The registry of stepwell cells: a controller per cell model and the user settings.'
);
