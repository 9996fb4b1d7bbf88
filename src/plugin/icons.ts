/**
 * Icons of our own drawing: a flight of steps going down into a well (the stepwell cell),
 * and a single step (the step command).
 */
import { LabIcon } from '@jupyterlab/ui-components';

/** The stepwell-cell icon. */
export const stepwellIcon = new LabIcon({
  name: 'stepwell:cell',
  svgstr:
    '<svg xmlns="http://www.w3.org/2000/svg" width="16" height="16" viewBox="0 0 16 16">' +
    '<path class="jp-icon3" fill="#616161" d="M1 2h3v3h3v3h3v3h3v3h2v1H1z"/></svg>'
});

/** The step icon: one stair with an arrow down to the next. */
export const stepIcon = new LabIcon({
  name: 'stepwell:step',
  svgstr:
    '<svg xmlns="http://www.w3.org/2000/svg" width="16" height="16" viewBox="0 0 16 16">' +
    '<path class="jp-icon3" fill="#616161" d="M1 4h6v5h8v2H5V6H1z"/>' +
    '<path class="jp-icon3" fill="#616161" d="M10 2l3 3h-2v2H9V5H7z"/></svg>'
});
