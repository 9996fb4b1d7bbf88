// A minimal prebuilt extension used by the browser test of the embedded app: it needs the app's
// command palette token, so it only activates when the app shares its JupyterLab singletons.
import { ICommandPalette } from '@jupyterlab/apputils';

const plugin = {
  id: 'stepwell-host-federated-check:plugin',
  description: 'Marks the page when a prebuilt extension activated with the shared palette token.',
  autoStart: true,
  requires: [ICommandPalette],
  activate: (_app, palette) => {
    document.body.dataset.stepwellFederatedCheck = palette ? 'activated' : 'no-palette';
  }
};

export default plugin;
