/**
 * `stepwell report`: the HTML page and the markdown variant of the demo notebooks, the kiln
 * notebook (files, three branches) and a notebook with hostile text. Checked here: what each
 * part says against the ledger decoded independently (numbers as stored; source: the demo
 * notebooks as written in Chromium), that nothing refers outside the file, that notebook text
 * is escaped. The page is opened in headless Chromium with the network off by
 * `test/e2e/report.test.ts`, which also reads the figures back from the rendered SVG.
 */
import { existsSync, mkdirSync, readFileSync, readdirSync } from 'fs';
import { join } from 'path';
import { main } from '../../../src/cli/main';
import { decodeBranches, validateLedger, type Ledger } from '../../../src/ledger';
import { fmt } from '../../../src/figures/format';
import { demoCopy, kilnNotebook, ledgerCell, readNb, tempDir, DEMOS } from './notebooks';

async function cli(...args: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = '';
  let err = '';
  const code = await main(args, { write: (s: string) => (out += s) }, { write: (s: string) => (err += s) });
  return { code, out, err };
}

const dir = tempDir('report');

function ledgerOf(path: string): Ledger {
  const v = validateLedger(ledgerCell(readNb(path)).metadata.stepwell);
  if (!v.ok) throw new Error(v.errors.join('; '));
  return v.ledger;
}

describe('stepwell report --out FILE.html', () => {
  it.each(['greenhouse-humidity-sensor.ipynb', 'parcel-sorter-plateau.ipynb'])('%s: one standalone page with every part', async (name) => {
    const out = join(dir, name.replace('.ipynb', '.html'));
    const r = await cli('report', join(DEMOS, name), '--out', out);
    expect(r).toMatchObject({ code: 0, err: '' });
    const html = readFileSync(out, 'utf8');
    const ledger = ledgerOf(join(DEMOS, name));
    const branches = decodeBranches(ledger);
    expect(r.out).toMatch(new RegExp(`^wrote ${out.replace(/[.*+?^${}()|[\]\\/]/g, '\\$&')}: 1 cell, [23] figures; verification: bit-identical\\n$`));
    // Nothing outside the file: no script, no link, no URL but the SVG namespace.
    expect(html).not.toMatch(/<script|<link|<iframe|<img|@import|url\((?!#)/i);
    expect(html.match(/https?:\/\/[^"\s<]+/g)?.every((u) => u === 'http://www.w3.org/2000/svg')).toBe(true);
    expect(html).toContain(`content="default-src 'none'; style-src 'unsafe-inline'; img-src data:"`);
    expect(html).toContain('@media print');
    for (const h of ['Verification', 'Figures', 'Branches', 'Findings', 'Recipes', 'Spec', 'Fingerprints and provenance']) expect(html).toContain(`<h3>${h}</h3>`);
    // Every branch: its tip fingerprint and the loss of its stored tip record, as fmt shows them.
    expect(branches.length).toBeGreaterThanOrEqual(2);
    for (const b of branches) {
      expect(html).toContain(b.head.fingerprint);
      expect(html).toContain(`<td class="num">${fmt(b.trajectory[b.trajectory.length - 1].loss)}</td>`);
    }
    expect(html).toContain(ledger.specHash);
    expect(html).toContain('Verified: both branches replay bit for bit from spec and seed.');
    // One SVG per figure, each with a title and a description (the text alternative).
    const svgs = html.match(/<svg [^>]*>/g) ?? [];
    expect(svgs.length).toBeGreaterThanOrEqual(2);
    expect(html.match(/<desc id="[^"]+">[^<]{20,}<\/desc>/g)?.length).toBe(svgs.length);
    // The sharpness figure exactly when the ledger holds sharpness readouts.
    const measured = branches.some((b) => b.readouts.sharpness.length > 0);
    expect([measured, html.includes('Sharpness against the stability limit')]).toEqual([measured, measured]);
    expect(svgs.length).toBe(1 + (measured ? 1 : 0) + (branches.some((b) => b.trajectory.some((x) => x.heldOutLoss !== undefined)) ? 1 : 0));
  });

  it('the kiln notebook: data files and their hashes, three branches, the restart and the fork at step 12', async () => {
    const d = tempDir('report-kiln');
    const { path, dataHash } = kilnNotebook(d);
    const out = join(d, 'kiln.html');
    expect((await cli('report', path, '--out', out)).code).toBe(0);
    const html = readFileSync(out, 'utf8');
    expect(html).toContain(dataHash);
    expect(html).toMatch(/<dt>file kiln-firings\.csv<\/dt><dd>sha256 [0-9a-f]{64}, \d+ bytes<\/dd>/);
    expect(html).toContain('<td>main at step 0 (restarts)</td><td><code>data.standardize=true</code></td>');
    expect(html).toContain('<td>main at step 12</td><td><code>lr=0.005</code></td>');
    // The branch forked at step 12 carries its lineage's recipe as YAML.
    expect(html).toMatch(/<b>slower<\/b> — <code>lr=0\.005<\/code> from main at step 12<\/p><pre>seed: 17\nrecipe:\n {2}optimizer: adam\n {2}lr: 0\.005/);
  });

  it('escapes the notebook text (findings, sources) so nothing becomes markup', async () => {
    const path = demoCopy('greenhouse-humidity-sensor.ipynb', dir, (nb) => {
      const c = ledgerCell(nb);
      const l = c.metadata.stepwell;
      l.findings = [{ branch: 'main', id: 'step-size-unstable', severity: 'problem', statement: '<img src=x onerror=alert(1)> & more', measured: 2.5, threshold: 1, source: 'source: "Cohen" et al. <2021>', proposal: { atStep: 0, set: { lr: 0.5 } } }];
    }, 'hostile.ipynb');
    const out = join(dir, 'hostile.html');
    const r = await cli('report', path, '--out', out);
    const html = readFileSync(out, 'utf8');
    // The ledger's findings are not covered by a digest; the edit shows in the findings, escaped.
    expect(r.code).toBe(0);
    expect(html).not.toContain('<img src=x');
    expect(html).toContain('&lt;img src=x onerror=alert(1)&gt; &amp; more');
    expect(html).toContain('source: &quot;Cohen&quot; et al. &lt;2021&gt;');
    expect(html).toContain('proposal: <code>from step 0: lr=0.5</code>');
  });
});

describe('stepwell report --out FILE.md', () => {
  it('markdown with the figures as SVG files beside it, readable as plain text', async () => {
    const out = join(dir, 'md', 'parcels.md');
    mkdirSync(join(dir, 'md'), { recursive: true });
    const r = await cli('report', join(DEMOS, 'parcel-sorter-plateau.ipynb'), '--out', out);
    expect(r.code).toBe(0);
    const md = readFileSync(out, 'utf8');
    const files = readdirSync(join(dir, 'md', 'parcels_files')).sort();
    expect(files).toEqual(['cell-2-held-out.svg', 'cell-2-loss.svg', 'cell-2-sharpness.svg'].filter((f) => md.includes(f)).sort());
    expect(files.length).toBeGreaterThanOrEqual(2);
    for (const f of files) {
      expect(md).toContain(`](parcels_files/${f})`);
      const svg = readFileSync(join(dir, 'md', 'parcels_files', f), 'utf8');
      expect(svg.startsWith('<?xml version="1.0" encoding="UTF-8"?>\n<svg xmlns="http://www.w3.org/2000/svg"')).toBe(true);
    }
    // Each figure's text alternative follows it as text; the spec and recipes are fenced YAML.
    expect(md).toMatch(/!\[Training loss of every branch\]\(parcels_files\/cell-2-loss\.svg\)\n\n\*Training loss of every branch\.\* Training loss of 2 branches by step\. main: training loss /);
    expect(md).toContain('```yaml\n%%stepwell\n');
    expect(md).toMatch(/^\| main \| — \| the spec as written \| 100 \|/m);
    expect(md).toContain('**Verified: both branches replay bit for bit from spec and seed.**');
    expect(existsSync(join(dir, 'md', 'parcels.html'))).toBe(false);
  });

  it('refuses other extensions and a missing --out', async () => {
    expect(await cli('report', join(DEMOS, 'parcel-sorter-plateau.ipynb'), '--out', join(dir, 'r.pdf'))).toMatchObject({ code: 2, err: expect.stringContaining('a report is written as .html or .md') });
    expect(await cli('report', join(DEMOS, 'parcel-sorter-plateau.ipynb'))).toMatchObject({ code: 2, err: expect.stringContaining('report needs --out FILE.html') });
  });
});
