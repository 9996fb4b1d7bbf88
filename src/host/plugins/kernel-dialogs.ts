/**
 * Session dialogs for an app that may have no kernels at all.
 *
 * JupyterLab asks "Select Kernel" in a modal dialog whenever a notebook opens without a running
 * kernel. In the embedded app there are no kernel specs, so that dialog could only offer
 * "No Kernel" and would block the page. This replacement for the
 * `@jupyterlab/apputils-extension:sessionDialogs` plugin keeps every other dialog, and when no
 * kernel spec exists it skips the selection: silently when a document opens, and with a short,
 * non-blocking notice when the user asks to run or pick a kernel later.
 */
import type { JupyterFrontEnd, JupyterFrontEndPlugin } from '@jupyterlab/application';
import { ISessionContextDialogs, Notification, SessionContextDialogs, type ISessionContext } from '@jupyterlab/apputils';
import { ISettingRegistry } from '@jupyterlab/settingregistry';
import { ITranslator, nullTranslator } from '@jupyterlab/translation';

/** Text of the notice shown when a kernel is requested but none is installed. */
export const NO_KERNEL_NOTICE =
  'No Jupyter kernel is available in this app. Stepwell cells run in the built-in engine; ' +
  'other code cells need a Jupyter server with a kernel.';

/** Whether the session's kernel spec manager knows no kernel spec at all. */
export async function hasNoKernelSpecs(sessionContext: ISessionContext): Promise<boolean> {
  const manager = sessionContext.specsManager;
  await manager.ready;
  const specs = manager.specs;
  return !specs || Object.keys(specs.kernelspecs).length === 0;
}

/** Session dialogs that do not block when no kernel can be selected. */
export class KernellessSessionDialogs extends SessionContextDialogs {
  private readonly _seen = new WeakSet<ISessionContext>();

  async selectKernel(sessionContext: ISessionContext): Promise<void> {
    if (await hasNoKernelSpecs(sessionContext)) {
      if (this._seen.has(sessionContext)) {
        Notification.info(NO_KERNEL_NOTICE, { autoClose: 6000 });
      }
      this._seen.add(sessionContext);
      return;
    }
    this._seen.add(sessionContext);
    return super.selectKernel(sessionContext);
  }
}

/** Provides {@link ISessionContextDialogs}; replaces the default provider, which the page config disables. */
export const kernelDialogsPlugin: JupyterFrontEndPlugin<ISessionContext.IDialogs> = {
  id: '@stepwell/host:session-dialogs',
  description: 'Session dialogs that do not ask for a kernel when no kernel is installed.',
  provides: ISessionContextDialogs,
  optional: [ITranslator, ISettingRegistry],
  autoStart: true,
  activate: (_app: JupyterFrontEnd, translator: ITranslator | null, settingRegistry: ISettingRegistry | null) =>
    new KernellessSessionDialogs({ translator: translator ?? nullTranslator, settingRegistry: settingRegistry ?? null })
};
