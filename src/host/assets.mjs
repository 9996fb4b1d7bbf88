// Writes the static files the embedded app needs next to the bundle (all under build/):
//   lab/index.html            page with the page config (baseUrl, static/settings/themes URLs, disabled plugins)
//   index.html                redirect to the first notebook
//   schemas/all.json          merged settings schemas of every bundled plugin package
//   schemas/all_federated.json  empty list (no prebuilt extensions), else every settings load 404s
//   themes/<pkg>/index.css    theme style sheets loaded at run time by the theme manager
//   api/translations/*.json   the English-only language list
//   api/contents/**/all.json + files/**   read-only contents index of the demo notebooks
import fs from 'node:fs';
import path from 'node:path';
import { BUILD, DEMO_DIR, FIXTURE_DIR, ROOT, readAppConfig, readPackageJson } from './paths.mjs';

const EPOCH = new Date(0).toISOString();

function writeJson(file, value) {
  fs.mkdirSync(path.dirname(file), { recursive: true });
  fs.writeFileSync(file, JSON.stringify(value));
}

/** Settings schema entries of one package, as the in-browser settings service expects them. */
function schemasOf(name) {
  const { dir, pkg } = readPackageJson(name);
  const schemaDir = pkg.jupyterlab && pkg.jupyterlab.schemaDir;
  if (!schemaDir || !fs.existsSync(path.join(dir, schemaDir))) return [];
  return fs
    .readdirSync(path.join(dir, schemaDir))
    .filter(f => f.endsWith('.json'))
    .sort()
    .map(f => {
      const file = path.join(dir, schemaDir, f);
      let schema;
      try {
        schema = JSON.parse(fs.readFileSync(file, 'utf8'));
      } catch (err) {
        throw new Error(`settings schema ${path.relative(ROOT, file)} is not valid JSON: ${err.message}`);
      }
      return {
        id: `${pkg.name}:${f.slice(0, -'.json'.length)}`,
        raw: '{}',
        schema,
        settings: {},
        version: pkg.version,
        last_modified: EPOCH,
        created: EPOCH
      };
    });
}

/** Merge the settings schemas of all bundled packages (and of Stepwell itself once its plugin exists). */
export function writeSchemas(app) {
  const names = [...app.extensions, ...app.mimeExtensions];
  const all = names.flatMap(schemasOf);
  if (fs.existsSync(path.join(ROOT, 'src', 'plugin', 'index.ts'))) all.push(...schemasOf('.'));
  writeJson(path.join(BUILD, 'schemas', 'all.json'), all);
  writeJson(path.join(BUILD, 'schemas', 'all_federated.json'), []);
  return all.length;
}

/** Copy each theme's style sheets to themes/<package>/ (the theme CSS files have no url() assets). */
export function writeThemes(app) {
  for (const name of app.themes) {
    const { dir, pkg } = readPackageJson(name);
    const themePath = pkg.jupyterlab.themePath;
    const out = path.join(BUILD, 'themes', name);
    fs.mkdirSync(out, { recursive: true });
    const styleDir = path.join(dir, path.dirname(themePath));
    for (const f of fs.readdirSync(styleDir)) {
      if (f.endsWith('.css')) fs.copyFileSync(path.join(styleDir, f), path.join(out, f));
    }
    fs.copyFileSync(path.join(dir, themePath), path.join(out, 'index.css'));
  }
}

export function writeTranslations() {
  const languages = { data: { en: { displayName: 'English', nativeName: 'English' } }, message: '' };
  writeJson(path.join(BUILD, 'api', 'translations', 'all.json'), languages);
  writeJson(path.join(BUILD, 'api', 'translations', 'en.json'), { data: {}, message: '' });
}

/** The folder the contents come from: demo-notebooks/ once it has a notebook, else the host fixtures. */
export function contentsSource() {
  const hasNotebook = dir => fs.existsSync(dir) && fs.readdirSync(dir).some(f => f.endsWith('.ipynb'));
  return hasNotebook(DEMO_DIR) ? DEMO_DIR : FIXTURE_DIR;
}

function modelOf(rel, abs, stat) {
  const name = path.basename(rel);
  const base = { name, path: rel, last_modified: stat.mtime.toISOString(), created: stat.mtime.toISOString(), writable: true, content: null };
  if (stat.isDirectory()) return { ...base, type: 'directory', format: 'json', mimetype: null, size: null };
  if (name.endsWith('.ipynb')) return { ...base, type: 'notebook', format: 'json', mimetype: 'application/x-ipynb+json', size: stat.size };
  const json = name.endsWith('.json');
  const text = json || /\.(md|txt|csv|ya?ml|py|ts|js)$/i.test(name);
  return {
    ...base,
    type: 'file',
    format: text ? 'text' : 'base64',
    mimetype: json ? 'application/json' : text ? 'text/plain' : 'application/octet-stream',
    size: stat.size
  };
}

/**
 * Rebuild api/contents and files/ from the contents folder. Notebooks are parsed first so a
 * broken demo file fails the build with its path instead of failing later in the browser.
 * Returns the relative paths of the notebooks: those at the top of the folder first, then those
 * in sub-folders, each group in name order (the first is the one the app and the site open).
 */
export function writeContents(source = contentsSource()) {
  for (const d of ['api/contents', 'files']) fs.rmSync(path.join(BUILD, d), { recursive: true, force: true });
  const notebooks = [];
  const walk = rel => {
    const absDir = path.join(source, rel);
    // Scripts kept beside the demos (generators) are not contents a notebook user needs.
    const entries = fs
      .readdirSync(absDir)
      .filter(f => !f.startsWith('.') && !/\.(ts|mts|cts|js|mjs|cjs)$/.test(f))
      .sort();
    const models = [];
    for (const f of entries) {
      const relPath = rel ? `${rel}/${f}` : f;
      const abs = path.join(absDir, f);
      const stat = fs.statSync(abs);
      models.push(modelOf(relPath, abs, stat));
      if (stat.isDirectory()) {
        walk(relPath);
        continue;
      }
      if (f.endsWith('.ipynb')) {
        try {
          JSON.parse(fs.readFileSync(abs, 'utf8'));
        } catch (err) {
          throw new Error(`demo notebook ${path.relative(ROOT, abs)} is not valid JSON: ${err.message}`);
        }
        notebooks.push(relPath);
      }
      const out = path.join(BUILD, 'files', relPath);
      fs.mkdirSync(path.dirname(out), { recursive: true });
      fs.copyFileSync(abs, out);
    }
    const dirStat = fs.statSync(absDir);
    writeJson(path.join(BUILD, 'api', 'contents', rel, 'all.json'), {
      ...modelOf(rel, absDir, dirStat),
      name: rel ? path.basename(rel) : '',
      path: rel,
      content: models
    });
  };
  walk('');
  // Notebooks at the top of the folder first (the first is the one the app and the site open),
  // then those in sub-folders; each group in name order.
  const depth = p => (p.includes('/') ? 1 : 0);
  return notebooks.sort((a, b) => depth(a) - depth(b) || (a < b ? -1 : a > b ? 1 : 0));
}

/**
 * Plugin ids to switch off: the host's list plus, while the Stepwell plugin is bundled, the ones
 * Stepwell's package.json names under `jupyterlab.disabledExtensions` (the same key a Jupyter
 * server honours for an installed prebuilt extension).
 */
export function disabledPlugins(app) {
  const own = fs.existsSync(path.join(ROOT, 'src', 'plugin', 'index.ts'))
    ? (readPackageJson('.').pkg.jupyterlab || {}).disabledExtensions || []
    : [];
  return [...new Set([...app.disabled, ...own])];
}

/** The page config the app reads at start-up (see DEVELOPERS.md, "Page config keys that matter"). */
export function pageConfig(app) {
  const { pkg } = readPackageJson('.');
  return {
    appName: 'Stepwell',
    appNamespace: 'stepwell',
    appVersion: pkg.version,
    baseUrl: '/',
    wsUrl: '',
    appUrl: '/lab',
    treeUrl: '/lab/tree',
    treePath: '',
    fullStaticUrl: '/static',
    staticUrl: '/static',
    fullLabextensionsUrl: '/extensions',
    labextensionsUrl: '/extensions',
    settingsUrl: '/schemas',
    themesUrl: '/themes',
    translationsApiUrl: '/api/translations',
    contentsAllJsonFile: 'all.json',
    contentsStorageName: 'Stepwell Storage',
    settingsStorageName: 'Stepwell Storage',
    workspacesStorageName: 'Stepwell Storage',
    federated_extensions: [],
    disabledExtensions: disabledPlugins(app),
    deferredExtensions: [],
    exposeAppInBrowser: 'false',
    terminalsAvailable: 'false',
    collaborative: 'false',
    devMode: 'false',
    cacheFiles: 'false',
    enableServiceWorkerCache: 'false',
    mode: 'multiple-document'
  };
}

function escapeForScript(json) {
  return json.replace(/</g, '\\u003c');
}

export function writePages(app, firstNotebook) {
  const config = escapeForScript(JSON.stringify(pageConfig(app), null, 2));
  const html = `<!doctype html>
<html lang="en">
<head>
  <meta charset="utf-8">
  <meta name="viewport" content="width=device-width, initial-scale=1">
  <title>Stepwell</title>
  <link rel="icon" href="data:,">
  <script id="jupyter-config-data" type="application/json">${config}</script>
</head>
<body>
  <script src="/static/main.js"></script>
</body>
</html>
`;
  fs.mkdirSync(path.join(BUILD, 'lab'), { recursive: true });
  fs.writeFileSync(path.join(BUILD, 'lab', 'index.html'), html);
  const target = firstNotebook ? `/lab/tree/${firstNotebook.split('/').map(encodeURIComponent).join('/')}` : '/lab';
  fs.writeFileSync(
    path.join(BUILD, 'index.html'),
    `<!doctype html><meta charset="utf-8"><title>Stepwell</title><meta http-equiv="refresh" content="0; url=${target}"><a href="${target}">${target}</a>\n`
  );
}

/** The documentation the "About Stepwell" dialog links to. */
export const DOCS = ['README.md', 'DEVELOPERS.md'];

/**
 * Copy the documentation to `extensions/stepwell/static/docs/`, where a prebuilt Stepwell keeps
 * it too, so the About dialog's links are the same in the embedded app and a real JupyterLab.
 */
export function writeDocs(dir = path.join(BUILD, 'extensions', 'stepwell', 'static', 'docs')) {
  fs.mkdirSync(dir, { recursive: true });
  for (const f of DOCS) fs.copyFileSync(path.join(ROOT, f), path.join(dir, f));
}

/** Write every asset; returns the notebooks of the contents index. */
export function writeAssets() {
  const app = readAppConfig();
  writeSchemas(app);
  writeThemes(app);
  writeTranslations();
  writeDocs();
  const notebooks = writeContents();
  writePages(app, notebooks[0]);
  return notebooks;
}
