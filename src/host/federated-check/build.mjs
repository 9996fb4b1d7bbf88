// Builds ./index.js as a prebuilt (federated) extension in the layout `build-labextension`
// produces: <out>/package.json with jupyterlab._build, <out>/static/remoteEntry.js.
// Usage: node src/host/federated-check/build.mjs <out-dir>
import fs from 'node:fs';
import path from 'node:path';
import { createRequire } from 'node:module';
import { fileURLToPath } from 'node:url';

const require = createRequire(import.meta.url);
const here = path.dirname(fileURLToPath(import.meta.url));
const NAME = 'stepwell-host-federated-check';

export async function buildFederatedCheck(out) {
  const webpack = require('webpack');
  const apputils = require('@jupyterlab/apputils/package.json').version;
  const config = {
    mode: 'development',
    devtool: false,
    context: here,
    entry: {},
    output: { path: path.join(out, 'static'), publicPath: 'auto', uniqueName: NAME, clean: true },
    plugins: [
      new webpack.container.ModuleFederationPlugin({
        name: NAME,
        library: { type: 'var', name: ['_JUPYTERLAB', NAME] },
        filename: 'remoteEntry.js',
        exposes: { './extension': './index.js' },
        shared: { '@jupyterlab/apputils': { singleton: true, import: false, requiredVersion: `^${apputils}` } }
      })
    ],
    stats: 'errors-only'
  };
  await new Promise((resolve, reject) =>
    webpack(config, (err, stats) => (err ? reject(err) : stats.hasErrors() ? reject(new Error(stats.toString('errors-only'))) : resolve()))
  );
  fs.writeFileSync(
    path.join(out, 'package.json'),
    JSON.stringify(
      {
        name: NAME,
        version: '0.0.1',
        jupyterlab: {
          // Asks the app to switch a core plugin off, as Stepwell does with the cell executor.
          disabledExtensions: ['@jupyterlab/help-extension:jupyter-forum'],
          _build: { load: 'static/remoteEntry.js', extension: './extension' }
        }
      },
      null,
      2
    )
  );
  return out;
}

if (import.meta.url === `file://${process.argv[1]}`) {
  const out = path.resolve(process.argv[2] || 'test-output/federated-check');
  buildFederatedCheck(out).then(
    () => console.log(`built ${NAME} into ${out}`),
    err => {
      console.error(err.message);
      process.exit(1);
    }
  );
}
