// Prebuilt (federated) JupyterLab extensions served next to the app at run time.
// STEPWELL_LABEXTENSIONS lists output folders of `build-labextension` (separated by ':'), each with
// a package.json whose `jupyterlab._build` names the remote entry and the exposed modules.
import fs from 'node:fs';
import path from 'node:path';
import { ROOT } from './paths.mjs';

/** One prebuilt extension: the page-config entry, its folder and its settings schemas. */
function readOne(dir) {
  const abs = path.resolve(ROOT, dir);
  const pkgFile = path.join(abs, 'package.json');
  if (!fs.existsSync(pkgFile)) {
    throw new Error(`STEPWELL_LABEXTENSIONS: ${abs} has no package.json (expected the output folder of a prebuilt extension)`);
  }
  let pkg;
  try {
    pkg = JSON.parse(fs.readFileSync(pkgFile, 'utf8'));
  } catch (err) {
    throw new Error(`STEPWELL_LABEXTENSIONS: ${pkgFile} is not valid JSON: ${err.message}`);
  }
  const b = pkg.jupyterlab && pkg.jupyterlab._build;
  if (!b || typeof b.load !== 'string') {
    throw new Error(`STEPWELL_LABEXTENSIONS: ${pkgFile} has no jupyterlab._build.load, so it is not a prebuilt extension`);
  }
  const entry = { name: pkg.name, load: b.load };
  for (const k of ['extension', 'mimeExtension', 'style']) if (typeof b[k] === 'string') entry[k] = b[k];
  const schemaDir = path.join(abs, 'schemas', pkg.name);
  const schemas = fs.existsSync(schemaDir)
    ? fs
        .readdirSync(schemaDir)
        .filter(f => f.endsWith('.json'))
        .sort()
        .map(f => ({
          id: `${pkg.name}:${f.slice(0, -'.json'.length)}`,
          raw: '{}',
          schema: JSON.parse(fs.readFileSync(path.join(schemaDir, f), 'utf8')),
          settings: {},
          version: pkg.version
        }))
    : [];
  const disabled = Array.isArray(pkg.jupyterlab.disabledExtensions) ? pkg.jupyterlab.disabledExtensions : [];
  return { entry, dir: abs, schemas, disabled };
}

/** The prebuilt extensions named by the environment (none when the variable is unset). */
export function readLabextensions(env = process.env) {
  const dirs = (env.STEPWELL_LABEXTENSIONS || '').split(path.delimiter).filter(Boolean);
  return dirs.map(readOne);
}

/**
 * The app page with `federated_extensions` set to the given entries and the plugins they ask to
 * switch off (`jupyterlab.disabledExtensions` of their package.json) added to `disabledExtensions`.
 */
export function withFederated(html, entries, disabled = []) {
  return withPageConfig(html, config => {
    config.federated_extensions = entries;
    config.disabledExtensions = [...new Set([...(config.disabledExtensions || []), ...disabled])];
  });
}

/** The app page with its page config changed by `edit` (which modifies the parsed object). */
export function withPageConfig(html, edit) {
  return html.replace(
    /(<script id="jupyter-config-data" type="application\/json">)([\s\S]*?)(<\/script>)/,
    (_m, open, json, close) => {
      const config = JSON.parse(json);
      edit(config);
      return open + JSON.stringify(config, null, 2).replace(/</g, '\\u003c') + close;
    }
  );
}
