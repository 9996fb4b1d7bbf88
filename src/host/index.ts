/**
 * Entry of the embedded Stepwell app. Sets the webpack public path from the page config before
 * anything else loads, then loads the app asynchronously (module federation needs the shared
 * singletons negotiated before any of them is imported).
 */
declare let __webpack_public_path__: string;

const configElement = document.getElementById('jupyter-config-data');
const pageConfig = (configElement?.textContent ? JSON.parse(configElement.textContent) : {}) as Record<string, unknown>;

/**
 * The static site (`npm run build:lite`) may be served from any sub-path, e.g. `/stepwell/`: its
 * page config says `siteRelative`, and every URL in it is rebased on the folder above `lab/`
 * of this page's own address, before the page config is first read.
 */
if (configElement && pageConfig.siteRelative === 'true') {
  const at = window.location.pathname.lastIndexOf('/lab/');
  const base = at >= 0 ? window.location.pathname.slice(0, at + 1) : '/';
  const rebased: Record<string, string> = {
    baseUrl: base,
    appUrl: `${base}lab`,
    treeUrl: `${base}lab/tree`,
    fullStaticUrl: `${base}static`,
    staticUrl: `${base}static`,
    fullLabextensionsUrl: `${base}extensions`,
    labextensionsUrl: `${base}extensions`,
    settingsUrl: `${base}schemas`,
    // JupyterLab joins the themes URL to baseUrl itself.
    themesUrl: 'themes',
    translationsApiUrl: `${base}api/translations`
  };
  Object.assign(pageConfig, rebased);
  // A static server has no /lab/tree/<path> routes: the site opens documents as lab/index.html?path=<path>.
  const requested = new URLSearchParams(window.location.search).get('path');
  if (requested) pageConfig.treePath = requested;
  configElement.textContent = JSON.stringify(pageConfig);
  keepSiteUrls(base);
}

/**
 * JupyterLab's router writes app routes such as `<base>lab/workspaces/auto-x/tree/<path>` into the
 * address bar; a static server has no such files, so a reload would fail. Write the same place as
 * `<base>lab/index.html?path=<path>` instead.
 */
function keepSiteUrls(base: string): void {
  const rewrite = (url: string | URL | null | undefined): string | URL | null | undefined => {
    if (url === null || url === undefined) return url;
    const target = new URL(String(url), window.location.href);
    const app = `${base}lab/`;
    if (target.origin !== window.location.origin || !target.pathname.startsWith(app) || target.pathname === `${app}index.html`) return url;
    const tree = /(?:^|\/)tree\/(.+)$/.exec(target.pathname.slice(app.length));
    const page = `${app}index.html`;
    return tree ? `${page}?path=${encodeURIComponent(decodeURIComponent(tree[1]))}` : page;
  };
  const push = history.pushState.bind(history);
  const replace = history.replaceState.bind(history);
  history.pushState = (data: unknown, unused: string, url?: string | URL | null) => push(data, unused, rewrite(url));
  history.replaceState = (data: unknown, unused: string, url?: string | URL | null) => replace(data, unused, rewrite(url));
}

/**
 * A Jupyter server puts the document path of a `<treeUrl>/<path>` URL into the page config as
 * `treePath`; a static host cannot, so derive it here, before the page config is first read.
 */
const treeUrl = typeof pageConfig.treeUrl === 'string' ? pageConfig.treeUrl.replace(/\/$/, '') : '/lab/tree';
if (configElement && window.location.pathname.startsWith(`${treeUrl}/`)) {
  const rest = window.location.pathname.slice(treeUrl.length + 1);
  try {
    pageConfig.treePath = rest.split('/').map(decodeURIComponent).join('/');
    configElement.textContent = JSON.stringify(pageConfig);
  } catch {
    console.warn(`Stepwell host: cannot decode the document path in ${window.location.pathname}`);
  }
}

const staticUrl = typeof pageConfig.fullStaticUrl === 'string' ? pageConfig.fullStaticUrl : undefined;
if (staticUrl) {
  __webpack_public_path__ = staticUrl.endsWith('/') ? staticUrl : `${staticUrl}/`;
}

performance.mark('stepwell-host:entry');
void import('./bootstrap').then(m => m.main()).catch((err: unknown) => {
  console.error('Stepwell app failed to start', err);
  const box = document.createElement('pre');
  box.className = 'stepwell-host-fatal';
  box.textContent = `Stepwell could not start: ${err instanceof Error ? err.stack ?? err.message : String(err)}`;
  document.body.appendChild(box);
});
