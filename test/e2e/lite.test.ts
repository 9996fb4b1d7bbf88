/**
 * The static site of `npm run build:lite`, served under the sub-path /stepwell/ by a plain static
 * file server (files only: no app routes, no fallback page), opens a demo and steps a cell.
 */
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
});
