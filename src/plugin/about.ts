/**
 * "About Stepwell" in the Help menu and the command palette: Stepwell's own dialog (version, what
 * it is, the proxy caveat, links to its documentation), not the host application's.
 */
import type { JupyterFrontEnd } from '@jupyterlab/application';
import { Dialog, showDialog, type ICommandPalette } from '@jupyterlab/apputils';
import { PageConfig, URLExt } from '@jupyterlab/coreutils';
import { Widget } from '@lumino/widgets';
import { aboutBody } from '../ui/about';

/** The command id. */
export const ABOUT_COMMAND = 'stepwell:about';

/**
 * The folder the documentation is served from: `static/docs/` of the Stepwell extension under
 * the application's extension URL (the prebuilt extension carries it; the embedded app's build
 * writes it there too).
 */
export function docsUrl(): string {
  return URLExt.join(PageConfig.getOption('fullLabextensionsUrl') || '/lab/extensions', 'stepwell', 'static', 'docs') + '/';
}

/**
 * Registers the command and its palette entry. Its place in the Help menu is declared in
 * `schema/plugin.json` (`jupyter.lab.menus`), so Stepwell needs no import of the main menu's
 * package (whose version the host application fixes).
 */
export function addAboutCommand(app: JupyterFrontEnd, palette: ICommandPalette | null): void {
  app.commands.addCommand(ABOUT_COMMAND, {
    label: 'About Stepwell',
    caption: 'Stepwell’s version, what it does, the small-proxy caveat and its documentation',
    execute: async () => {
      const body = new Widget({ node: aboutBody(docsUrl()) });
      await showDialog({ title: 'About Stepwell', body, buttons: [Dialog.okButton({ label: 'Close' })] });
    }
  });
  palette?.addItem({ command: ABOUT_COMMAND, category: 'Help' });
}
