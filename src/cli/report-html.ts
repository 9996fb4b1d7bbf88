/**
 * The report as one standalone HTML file: inline CSS (screen and print), inline SVG figures, no
 * script, no external resource — a Content-Security-Policy that forbids every fetch makes the
 * page open the same with no server and no network. Every piece of text from the notebook is
 * escaped (the notebook is untrusted input).
 */
import { fmt } from '../figures/format';
import type { NotebookCheck } from './verify';
import type { ReportCell } from './report-model';
import { PROXY_NOTE, reportHeading, verdictSentence } from './report-text';

/** Escapes text for HTML content and attribute values. */
export function escapeHtml(text: string): string {
  return text.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c] as string);
}

const e = escapeHtml;

const CSS = `
:root { --fg: #1f2328; --muted: #57606a; --line: #d0d7de; --ok: #1a7f37; --warn: #9a6700; --bad: #cf222e; --code: #f6f8fa; }
* { box-sizing: border-box; }
body { margin: 0 auto; max-width: 980px; padding: 24px 32px 48px; color: var(--fg); font: 14px/1.5 Helvetica, Arial, sans-serif; background: #fff; }
h1 { font-size: 22px; margin: 0 0 4px; }
h2 { font-size: 18px; margin: 32px 0 8px; padding-top: 12px; border-top: 2px solid var(--line); }
h3 { font-size: 15px; margin: 20px 0 6px; }
.meta, .note, figcaption { color: var(--muted); }
.verdict { font-weight: bold; padding: 6px 10px; border-left: 4px solid; background: var(--code); }
.verdict.bit-identical { border-color: var(--ok); color: var(--ok); }
.verdict.within-tolerance { border-color: var(--warn); color: var(--warn); }
.verdict.differs, .verdict.unreadable { border-color: var(--bad); color: var(--bad); }
table { border-collapse: collapse; width: 100%; margin: 6px 0; font-size: 13px; }
th, td { border: 1px solid var(--line); padding: 4px 6px; text-align: left; vertical-align: top; }
th { background: var(--code); }
td.num { text-align: right; font-variant-numeric: tabular-nums; }
code, pre { font-family: "DejaVu Sans Mono", Menlo, Consolas, monospace; font-size: 12px; }
pre { background: var(--code); border: 1px solid var(--line); padding: 8px 10px; overflow-x: auto; white-space: pre-wrap; word-break: break-word; }
figure { margin: 10px 0 18px; }
figure svg { display: block; max-width: 100%; height: auto; border: 1px solid var(--line); }
ul.changes li, ul.problems li { margin: 2px 0; }
.bad { color: var(--bad); }
.ok { color: var(--ok); }
dl { display: grid; grid-template-columns: max-content 1fr; gap: 2px 12px; margin: 6px 0; }
dt { color: var(--muted); }
dd { margin: 0; word-break: break-all; }
@page { size: A4; margin: 14mm 12mm; }
@media print {
  body { max-width: none; padding: 0; font-size: 10.5pt; }
  section.cell { break-before: page; }
  section.cell:first-of-type { break-before: auto; }
  h2 { border-top: none; }
  figure, table, pre, dl, .verdict { break-inside: avoid; }
  h2, h3 { break-after: avoid; }
  pre { white-space: pre-wrap; }
  * { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
}
`;

function branchesTable(c: ReportCell): string {
  const rows = c.branches.map((b) => {
    const from = b.parent === null ? '—' : `${e(b.parent)} at step ${b.forkStep}${b.restart ? ' (restarts)' : ''}`;
    const steps = b.cursor < b.tip ? `${b.tip} (shown at ${b.cursor})` : String(b.tip);
    const cls = b.match === null ? '' : b.match === 'bit-identical' ? 'ok' : 'bad';
    return `<tr><td><b>${e(b.name)}</b></td><td>${from}</td><td>${b.parent === null ? 'the spec as written' : `<code>${e(b.change)}</code>`}</td><td class="num">${steps}</td><td class="num">${e(fmt(b.lossAtTip))}</td><td class="num">${e(fmt(b.heldOutAtTip))}</td><td><code>${e(b.tipFingerprint.slice(0, 16))}</code></td><td class="${cls}">${e(b.match ?? 'not replayed')}</td></tr>`;
  });
  return `<table><thead><tr><th>branch</th><th>forked from</th><th>change</th><th>steps</th><th>loss at tip</th><th>held-out</th><th>tip fingerprint</th><th>replay</th></tr></thead><tbody>${rows.join('')}</tbody></table>`;
}

function findingsBlock(c: ReportCell): string {
  if (c.findings.length === 0) return '<p class="note">The ledger holds no findings for this cell.</p>';
  const rows = c.findings.map((f) => `<tr><td>${e(f.severity)}</td><td><code>${e(f.id)}</code>${f.branch !== '' ? `<br><span class="meta">${e(f.branch)}</span>` : ''}</td><td>${e(f.statement)}${f.proposal ? `<br><span class="meta">proposal: <code>${e(f.proposal)}</code></span>` : ''}</td><td class="num">${e(f.measured)}</td><td class="num">${e(f.threshold)}</td><td>${e(f.source)}</td></tr>`);
  return `<table><thead><tr><th>severity</th><th>finding</th><th>statement</th><th>measured</th><th>threshold</th><th>source of the threshold</th></tr></thead><tbody>${rows.join('')}</tbody></table>`;
}

function verificationBlock(c: ReportCell): string {
  const k = c.work.check;
  const items: string[] = [];
  if (k.spec.changed) {
    const lines = k.spec.lines.map((l) => `line ${l.line}: <code>${e(l.recorded ?? '(absent)')}</code> → <code>${e(l.current ?? '(absent)')}</code>`);
    items.push(`<li class="bad">The spec text changed since the ledger was written (sha256 <code>${e((k.spec.recordedHash ?? '').slice(0, 16))}</code> → <code>${e(k.spec.currentHash.slice(0, 16))}</code>)${lines.length > 0 ? `: ${lines.join('; ')}` : ''}.</li>`);
  }
  if (k.data.changed) items.push(`<li class="bad">The data changed since the ledger was written: data hash <code>${e(k.data.recordedHash ?? 'none')}</code> in the ledger, <code>${e(k.data.currentHash ?? 'none')}</code> now.</li>`);
  if (k.engine.changed) items.push(`<li>Written by ${e(k.engine.recorded ?? '?')}, replayed by ${e(k.engine.current)}.</li>`);
  for (const i of k.integrity) items.push(`<li class="bad">Edited: ${e(i)}</li>`);
  for (const p of k.problems) items.push(`<li class="bad">Cannot verify: ${e(p)}</li>`);
  for (const b of c.branches) if (b.verification) items.push(`<li><b>${e(b.name)}</b>: ${e(b.verification)}</li>`);
  return `<p class="verdict ${e(k.verdict)}">${e(verdictSentence(k.verdict, c.branches.length))}</p><ul class="changes">${items.join('')}</ul>`;
}

function provenance(c: ReportCell): string {
  const k = c.work.check;
  const l = c.work.ledger;
  const rows: [string, string][] = [
    ['engine', `${k.engine.recorded ?? '—'}${k.engine.changed ? ` (replayed by ${k.engine.current})` : ''}`],
    ['ledger version', l ? String(l.version) : '—'],
    ['saved', l?.savedAt ?? '—'],
    ['seed', l ? String(l.seed) : '—'],
    ['parameters', l ? String(l.parameterCount) : '—'],
    ['spec sha256', k.spec.recordedHash ?? '—'],
    ['data hash', k.data.recordedHash ?? 'inline data (part of the spec)']
  ];
  for (const f of k.data.files) rows.push([`file ${f.name}`, `sha256 ${f.sha256}, ${f.bytes} bytes`]);
  for (const b of c.branches) rows.push([`tip of ${b.name}`, `step ${b.tip}: ${b.tipFingerprint}`]);
  return `<dl>${rows.map(([a, b]) => `<dt>${e(a)}</dt><dd>${e(b)}</dd>`).join('')}</dl>`;
}

function cellSection(c: ReportCell): string {
  const parts = [`<section class="cell"><h2>${e(c.label)}</h2>`, '<h3>Verification</h3>', verificationBlock(c)];
  if (c.figures.length > 0) {
    parts.push('<h3>Figures</h3>');
    for (const f of c.figures) parts.push(`<figure>${f.svg}<figcaption>${e(f.title)}. ${e(f.text)}</figcaption></figure>`);
  }
  if (c.branches.length > 0) parts.push('<h3>Branches</h3>', branchesTable(c));
  for (const r of c.records) {
    parts.push(`<p>Decision record in cell ${r.cellIndex}: <i>${e(r.question)}</i> — chosen: <b>${e(r.chosen)}</b>.${r.stale.length > 0 ? ` <span class="bad">It names tips that are no longer the ledger's (${e(r.stale.join(', '))}): write it again.</span>` : ''}</p>`);
  }
  parts.push('<h3>Findings</h3>', findingsBlock(c));
  if (c.branches.length > 0) {
    parts.push('<h3>Recipes</h3>');
    for (const b of c.branches) parts.push(`<p><b>${e(b.name)}</b>${b.parent === null ? '' : ` — <code>${e(b.change)}</code> from ${e(b.parent)} at step ${b.forkStep}`}</p><pre>${e(b.recipeYaml)}</pre>`);
  }
  parts.push(`<h3>Spec</h3><pre>${e(c.work.specText)}</pre>`, '<h3>Fingerprints and provenance</h3>', provenance(c), '</section>');
  return parts.join('\n');
}

/** The whole report as an HTML document. */
export function reportHtml(result: NotebookCheck, cells: readonly ReportCell[], generated: string): string {
  const head = reportHeading(result, generated);
  return `<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta http-equiv="Content-Security-Policy" content="default-src 'none'; style-src 'unsafe-inline'; img-src data:">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>${e(head.title)}</title>
<style>${CSS}</style>
</head>
<body>
<header><h1>${e(head.title)}</h1><p class="meta">${e(head.meta)}</p>
<p class="verdict ${e(result.verdict)}">${e(head.verdict)}</p>
<p class="note">${e(PROXY_NOTE)}</p></header>
${cells.map(cellSection).join('\n')}
</body>
</html>
`;
}
