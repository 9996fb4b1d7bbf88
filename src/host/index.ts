/**
 * Entry of the embedded Stepwell app. Sets the webpack public path from the page config before
 * anything else loads, then loads the app asynchronously (module federation needs the shared
 * singletons negotiated before any of them is imported).
 */
declare let __webpack_public_path__: string;

const configElement = document.getElementById('jupyter-config-data');
const pageConfig = (configElement?.textContent ? JSON.parse(configElement.textContent) : {}) as Record<string, unknown>;

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
