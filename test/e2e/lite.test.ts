/**
 * The static site of `npm run build:lite`, served under the sub-path /stepwell/ by a plain static
 * file server (files only: no app routes, no fallback page), opens a demo and steps a cell, and
 * reads a CSV with a byte-order mark byte-exact (its SHA-256 in the ledger is the file's).
 */
import { createHash } from 'crypto';
import { spawnSync } from 'child_process';
import * as fs from 'fs';
import * as http from 'http';
import type { AddressInfo } from 'net';
import * as path from 'path';
import { failedRequests, launchBrowser, ourErrors, ROOT, screenshot, type IBrowserSession } from './harness';

jest.setTimeout(300_000);

const SITE = path.join(ROOT, 'dist', 'lite');
const PREFIX = '/stepwell/';
const TYPES: Record<string, string> = { '.html': 'text/html', '.js': 'text/javascript', '.css': 'text/css', '.json': 'application/json', '.ipynb': 'application/json', '.svg': 'image/svg+xml', '.woff2': 'font/woff2', '.woff': 'font/woff', '.ttf': 'font/ttf' };

/** Files under PREFIX from SITE, a directory's index.html, 404 for everything else. */
function staticServer(): http.Server {
  return http.createServer((req, res) => {
    const url = decodeURIComponent((req.url ?? '/').split('?')[0]);
    if (!url.startsWith(PREFIX)) return void res.writeHead(404).end();
    let file = path.normalize(path.join(SITE, url.slice(PREFIX.length)));
    if (!file.startsWith(SITE)) return void res.writeHead(404).end();
    if (fs.existsSync(file) && fs.statSync(file).isDirectory()) file = path.join(file, 'index.html');
    if (!fs.existsSync(file)) return void res.writeHead(404).end();
    res.writeHead(200, { 'Content-Type': TYPES[path.extname(file)] ?? 'application/octet-stream' });
    fs.createReadStream(file).pipe(res);
  });
}

let server: http.Server;
let origin: string;
let browser: IBrowserSession;

beforeAll(async () => {
  const built = spawnSync(process.execPath, [path.join(ROOT, 'src', 'package', 'lite.mjs'), '--expose-app'], { cwd: ROOT, encoding: 'utf8', timeout: 300_000 });
  if (built.status !== 0) throw new Error(`npm run build:lite failed:\n${built.stdout}\n${built.stderr}`);
  server = staticServer();
  await new Promise<void>(resolve => server.listen(0, '127.0.0.1', () => resolve()));
  origin = `http://127.0.0.1:${(server.address() as AddressInfo).port}`;
  browser = await launchBrowser();
});

afterAll(async () => {
  await browser?.close();
  await new Promise(resolve => server?.close(resolve));
});

describe('the static site under a sub-path', () => {
  it('opens the first demo from the site root and steps a cell', async () => {
    const page = browser.page;
    await page.goto(`${origin}${PREFIX}`, { waitUntil: 'domcontentloaded' });
    const cell = page.locator('.sw-CellWidget').first();
    await cell.waitFor({ timeout: 90_000 });
    await cell.locator('.sw-Status', { hasText: /^step 14 ·/ }).waitFor({ timeout: 30_000 });
    await cell.locator('.sw-Button-rewind').click();
    await cell.locator('.sw-Form input').fill('2');
    await cell.locator('.sw-Form button', { hasText: 'Go' }).click();
    // Going back keeps the later steps: the status says how far the branch reached.
    await cell.locator('.sw-Status', { hasText: /^step 2 \(of 14\) ·/ }).waitFor({ timeout: 30_000 });
    await cell.locator('.sw-Button-step').click();
    await cell.locator('.sw-Status', { hasText: /^step 3 \(of 14\) ·/ }).waitFor({ timeout: 30_000 });
    await screenshot(page, 'lite-subpath-stepped');
    // Every request stayed below the sub-path, and none failed.
    expect(failedRequests(browser)).toEqual([]);
    expect(new URL(page.url()).pathname.startsWith(PREFIX)).toBe(true);
    expect(ourErrors(browser)).toEqual([]);
  });

  it('opens a notebook whose data and weights are files beside it, and steps it from them', async () => {
    const page = browser.page;
    await page.goto(`${origin}${PREFIX}lab/index.html?path=walk-in-cooler/walk-in-cooler.ipynb`, { waitUntil: 'domcontentloaded' });
    const cell = page.locator('.jp-NotebookPanel:not(.lm-mod-hidden) .sw-CellWidget').first();
    await cell.waitFor({ timeout: 90_000 });
    await cell.locator('.sw-Status', { hasText: /^step 18 ·/ }).waitFor({ timeout: 30_000 });
    await cell.locator('.sw-Branch[data-branch="lr=0.1"]').click();
    await cell.locator('.sw-Status', { hasText: /^step 81 ·/ }).waitFor({ timeout: 30_000 });
    // The first action starts the engine: the CSV and safetensors files are read from the site.
    await cell.locator('.sw-Button-step').click();
    await cell.locator('.sw-Status', { hasText: /^step 82 ·/ }).waitFor({ timeout: 60_000 });
    expect(await cell.locator('.sw-Problem').count()).toBe(0);
    await screenshot(page, 'lite-files-stepped');
    expect(failedRequests(browser)).toEqual([]);
    expect(ourErrors(browser)).toEqual([]);
  });

  it('keeps a CSV\'s byte-order mark: the ledger records the SHA-256 of the file\'s own bytes', async () => {
    // a folder added to the built site as the build adds the demos: files/ and the contents index
    const csv = Buffer.from('\ufeffdoor_openings,duty,celsius\r\n3,0.5,4.5\r\n0,0.25,3.75\r\n7.5,0.75,6.25\r\n1.25,0.125,2.5\r\n', 'utf8');
    expect(Array.from(csv.subarray(0, 3))).toEqual([0xef, 0xbb, 0xbf]);
    const spec = ['%%stepwell', '# stepwell: a cold-room log exported by a spreadsheet (UTF-8 with a byte-order mark)', 'seed: 2', 'model: { inputs: 2, layers: [{ units: 1 }] }', 'data: { file: cold-room.csv, target: celsius }', 'recipe: { optimizer: sgd, lr: 0.05 }', ''].join('\n');
    const nb = { cells: [{ cell_type: 'code', id: 'bom', metadata: {}, source: spec, outputs: [], execution_count: null }], metadata: {}, nbformat: 4, nbformat_minor: 5 };
    const nbText = JSON.stringify(nb);
    fs.mkdirSync(path.join(SITE, 'files', 'bom-check'), { recursive: true });
    fs.writeFileSync(path.join(SITE, 'files', 'bom-check', 'cold-room.csv'), csv);
    fs.writeFileSync(path.join(SITE, 'files', 'bom-check', 'bom.ipynb'), nbText);
    const at = new Date(0).toISOString();
    const model = (name: string, type: string, format: string, mimetype: string, size: number) => ({ name, path: `bom-check/${name}`, last_modified: at, created: at, writable: true, content: null, type, format, mimetype, size });
    fs.mkdirSync(path.join(SITE, 'api', 'contents', 'bom-check'), { recursive: true });
    const folder = { ...model('bom-check', 'directory', 'json', '', 0), path: 'bom-check', mimetype: null, size: null };
    fs.writeFileSync(path.join(SITE, 'api', 'contents', 'bom-check', 'all.json'), JSON.stringify({ ...folder, content: [model('bom.ipynb', 'notebook', 'json', 'application/x-ipynb+json', nbText.length), model('cold-room.csv', 'file', 'text', 'text/plain', csv.length)] }));
    const rootIndex = path.join(SITE, 'api', 'contents', 'all.json');
    const root = JSON.parse(fs.readFileSync(rootIndex, 'utf8')) as { content: unknown[] };
    fs.writeFileSync(rootIndex, JSON.stringify({ ...root, content: [...root.content, folder] }));

    const page = browser.page;
    await page.goto(`${origin}${PREFIX}lab/index.html?path=bom-check/bom.ipynb`, { waitUntil: 'domcontentloaded' });
    const cell = page.locator('.jp-NotebookPanel:not(.lm-mod-hidden) .jp-Notebook .jp-CodeCell', { hasText: 'cold-room.csv' }).first();
    await cell.waitFor({ timeout: 90_000 });
    await cell.locator('.cm-content').click();
    await page.keyboard.press('Shift+Enter');
    const widget = page.locator('.jp-NotebookPanel:not(.lm-mod-hidden) .sw-CellWidget').first();
    await widget.locator('.sw-Status', { hasText: /^step 0 ·/ }).waitFor({ timeout: 60_000 });
    await widget.locator('.sw-Button-step').click();
    await widget.locator('.sw-Status', { hasText: /^step 1 ·/ }).waitFor({ timeout: 30_000 });
    await screenshot(page, 'lite-bom-csv-stepped');
    const files = await page.evaluate(async () => {
      const app = (window as unknown as { jupyterapp: { shell: { currentWidget: { model: { cells: { get(i: number): { getMetadata(k: string): unknown } } } } } } }).jupyterapp;
      for (let i = 0; i < 50; i++) {
        const ledger = app.shell.currentWidget.model.cells.get(0).getMetadata('stepwell') as { branches?: { files?: unknown }[] } | undefined;
        if (ledger?.branches?.[0]?.files !== undefined) return ledger.branches[0].files;
        await new Promise((r) => setTimeout(r, 200));
      }
      return null;
    });
    // source: Node's crypto (OpenSSL SHA-256) over the file as written, mark included
    expect(files).toEqual([{ name: 'cold-room.csv', bytes: csv.length, sha256: createHash('sha256').update(csv).digest('hex') }]);
    expect(await cell.locator('.sw-Problem').count()).toBe(0);
    expect(failedRequests(browser)).toEqual([]);
    expect(ourErrors(browser)).toEqual([]);
  });
});
