/** Plugins of the embedded app itself (not part of the Stepwell extension). */
import type { JupyterFrontEndPlugin } from '@jupyterlab/application';
import { kernelDialogsPlugin } from './kernel-dialogs';

const plugins: JupyterFrontEndPlugin<unknown>[] = [kernelDialogsPlugin as JupyterFrontEndPlugin<unknown>];
export default plugins;
