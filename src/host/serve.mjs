// A small static file server for the built app (build/), bound to 127.0.0.1.
// Usage: node src/host/serve.mjs [--port N]   (or STEPWELL_PORT=N; 0 = any free port; default 8890,
// moving to a free port when the default is taken). Prints one URL: the first demo notebook.
import fs from 'node:fs';
import http from 'node:http';
import path from 'node:path';
import { BUILD } from './paths.mjs';
import { readLabextensions, withFederated, withPageConfig } from './labextensions.mjs';

export const DEFAULT_PORT = 8890;
const HOST = '127.0.0.1';

const TYPES = {
  '.html': 'text/html; charset=utf-8',
  '.js': 'text/javascript; charset=utf-8',
  '.mjs': 'text/javascript; charset=utf-8',
  '.css': 'text/css; charset=utf-8',
  '.json': 'application/json; charset=utf-8',
  '.ipynb': 'application/json; charset=utf-8',
  '.svg': 'image/svg+xml',
  '.png': 'image/png',
  '.ico': 'image/x-icon',
  '.woff': 'font/woff',
  '.woff2': 'font/woff2',
  '.ttf': 'font/ttf',
  '.wasm': 'application/wasm',
  '.txt': 'text/plain; charset=utf-8',
  '.md': 'text/markdown; charset=utf-8',
  '.csv': 'text/csv; charset=utf-8'
};

/** Map a request path to a file below build/, or null. App routes (/lab/...) get the app page. */
export function resolveFile(urlPath, root = BUILD) {
  let p;
  try {
    p = decodeURIComponent(urlPath.split('?')[0].split('#')[0]);
  } catch {
    return null;
  }
  if (p === '/' || p === '') return path.join(root, 'index.html');
  if (p === '/lab' || p === '/lab/' || p.startsWith('/lab/tree/') || p === '/lab/tree' || p.startsWith('/lab/workspaces/')) {
    return path.join(root, 'lab', 'index.html');
  }
  const file = path.normalize(path.join(root, p));
  if (file !== root && !file.startsWith(root + path.sep)) return null;
  return file;
}

/** Relative path of the first notebook in the generated contents index (top level first), or null. */
export function firstNotebook(root = BUILD) {
  const walk = rel => {
    const index = path.join(root, 'api', 'contents', rel, 'all.json');
    if (!fs.existsSync(index)) return null;
    const entries = JSON.parse(fs.readFileSync(index, 'utf8')).content;
    const nb = entries.find(e => e.type === 'notebook');
    if (nb) return nb.path;
    for (const d of entries.filter(e => e.type === 'directory')) {
      const found = walk(d.path);
      if (found) return found;
    }
    return null;
  };
  return walk('');
}

/** The URL that opens a notebook in the app. */
export function notebookUrl(port, notebook) {
  const base = `http://${HOST}:${port}`;
  return notebook ? `${base}/lab/tree/${notebook.split('/').map(encodeURIComponent).join('/')}` : `${base}/lab`;
}

/** A file of a prebuilt extension (`/extensions/<name>/...`), or null. */
function extensionFile(urlPath, labextensions) {
  let p;
  try {
    p = decodeURIComponent(urlPath.split('?')[0]);
  } catch {
    return null;
  }
  for (const ext of labextensions) {
    const prefix = `/extensions/${ext.entry.name}/`;
    if (!p.startsWith(prefix)) continue;
    const file = path.normalize(path.join(ext.dir, p.slice(prefix.length)));
    return file.startsWith(ext.dir + path.sep) ? file : null;
  }
  return null;
}

function handler(root, labextensions, exposeApp) {
  const appPage = path.join(root, 'lab', 'index.html');
  return (req, res) => {
    if (req.method !== 'GET' && req.method !== 'HEAD') {
      res.writeHead(405, { Allow: 'GET, HEAD' }).end();
      return;
    }
    const urlPath = (req.url || '/').split('?')[0];
    if (labextensions.length && urlPath === '/schemas/all_federated.json') {
      const body = JSON.stringify(labextensions.flatMap(e => e.schemas));
      res.writeHead(200, { 'Content-Type': TYPES['.json'], 'Cache-Control': 'no-store' }).end(body);
      return;
    }
    const file = extensionFile(urlPath, labextensions) ?? resolveFile(req.url || '/', root);
    if ((labextensions.length || exposeApp) && file === appPage && fs.existsSync(appPage)) {
      let body = fs.readFileSync(appPage, 'utf8');
      if (labextensions.length) body = withFederated(body, labextensions.map(e => e.entry), labextensions.flatMap(e => e.disabled));
      // window.jupyterapp lets the browser tests drive the app; users' pages do not expose it
      if (exposeApp) body = withPageConfig(body, config => { config.exposeAppInBrowser = 'true'; });
      res.writeHead(200, { 'Content-Type': TYPES['.html'], 'Cache-Control': 'no-store' }).end(body);
      return;
    }
    let stat = null;
    try {
      stat = file ? fs.statSync(file) : null;
    } catch {
      stat = null;
    }
    if (!stat || !stat.isFile()) {
      res.writeHead(404, { 'Content-Type': 'text/plain; charset=utf-8', 'Cache-Control': 'no-store' });
      res.end(`not found: ${req.url}\n`);
      return;
    }
    res.writeHead(200, {
      'Content-Type': TYPES[path.extname(file).toLowerCase()] || 'application/octet-stream',
      'Content-Length': stat.size,
      'Cache-Control': 'no-store'
    });
    if (req.method === 'HEAD') {
      res.end();
      return;
    }
    fs.createReadStream(file).pipe(res);
  };
}

function listen(server, port) {
  return new Promise((resolve, reject) => {
    const onError = err => {
      server.off('listening', onListening);
      reject(err);
    };
    const onListening = () => {
      server.off('error', onError);
      resolve(server.address().port);
    };
    server.once('error', onError);
    server.once('listening', onListening);
    server.listen(port, HOST);
  });
}

/**
 * Serve build/ on 127.0.0.1. With `strict` the port must be free; otherwise a taken port falls
 * back to any free one. Resolves with the server, its port and the URL of the first notebook.
 */
export async function startServer({ port = DEFAULT_PORT, strict = false, root = BUILD, exposeApp = process.env.STEPWELL_EXPOSE_APP === '1' } = {}) {
  if (!fs.existsSync(path.join(root, 'lab', 'index.html'))) {
    throw new Error(`no built app in ${root}: run \`npm run build\` first`);
  }
  const labextensions = readLabextensions();
  const server = http.createServer(handler(root, labextensions, exposeApp));
  let actual;
  try {
    actual = await listen(server, port);
  } catch (err) {
    if (err.code !== 'EADDRINUSE' || strict) throw err;
    console.warn(`stepwell: port ${port} is in use, using a free port instead`);
    actual = await listen(server, 0);
  }
  return { server, port: actual, url: notebookUrl(actual, firstNotebook(root)), labextensions: labextensions.map(e => e.entry.name) };
}

/** Port from --port N / --port=N, else STEPWELL_PORT, else the default. Throws on a bad value. */
export function portFromArgs(argv = process.argv.slice(2), env = process.env) {
  let raw;
  const i = argv.findIndex(a => a === '--port' || a.startsWith('--port='));
  if (i >= 0) raw = argv[i].includes('=') ? argv[i].split('=')[1] : argv[i + 1];
  else if (env.STEPWELL_PORT !== undefined && env.STEPWELL_PORT !== '') raw = env.STEPWELL_PORT;
  if (raw === undefined) return { port: DEFAULT_PORT, explicit: false };
  const port = Number(raw);
  if (!Number.isInteger(port) || port < 0 || port > 65535) {
    throw new Error(`port must be an integer from 0 to 65535 (from ${i >= 0 ? '--port' : 'STEPWELL_PORT'}), got "${raw}"`);
  }
  return { port, explicit: true };
}

/** Start serving and print the URL; keeps running until interrupted. */
export async function serveFromCommandLine() {
  const { port } = portFromArgs();
  const { server, url, labextensions } = await startServer({ port });
  if (labextensions.length) console.log(`stepwell: serving prebuilt extensions ${labextensions.join(', ')}`);
  console.log(`Stepwell is running at ${url}`);
  const stop = () => server.close(() => process.exit(0));
  process.on('SIGINT', stop);
  process.on('SIGTERM', stop);
  return server;
}

if (import.meta.url === `file://${process.argv[1]}`) {
  serveFromCommandLine().catch(err => {
    console.error(`stepwell: ${err.message}`);
    process.exit(1);
  });
}
