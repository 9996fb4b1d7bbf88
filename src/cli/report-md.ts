/**
 * The report as markdown that also reads as plain text: headings, pipe tables, fenced blocks for
 * the spec and the recipes, and each figure as an SVG file beside the report (linked as an image,
 * with its text alternative written out below it, so nothing is lost without an image viewer).
 * Text from the notebook is escaped so it stays literal.
 */
import { fmt } from '../figures/format';
import type { NotebookCheck } from './verify';
import type { ReportCell } from './report-model';
import { PROXY_NOTE, reportHeading, verdictSentence } from './report-text';

/** Escapes characters markdown would interpret, so notebook text stays literal; folds newlines. */
export function escapeMd(text: string): string {
  return text.replace(/\s*\n\s*/g, ' ').replace(/[\\`*_[\]<>|#~]/g, (c) => `\\${c}`);
}

const m = escapeMd;

/** A fenced block whose fence is longer than any run of backticks inside `text`. */
export function fenced(text: string, info = ''): string {
  const longest = Math.max(0, ...(text.match(/`+/g) ?? []).map((r) => r.length));
  const fence = '`'.repeat(Math.max(3, longest + 1));
  return `${fence}${info}\n${text.endsWith('\n') ? text : `${text}\n`}${fence}`;
}

/** Inline code that survives backticks in the text. */
function code(text: string): string {
  const clean = text.replace(/\s*\n\s*/g, ' ');
  const longest = Math.max(0, ...(clean.match(/`+/g) ?? []).map((r) => r.length));
  const tick = '`'.repeat(longest + 1);
  return `${tick}${longest > 0 ? ' ' : ''}${clean.replace(/\|/g, '\\|')}${longest > 0 ? ' ' : ''}${tick}`;
}

function cellMarkdown(c: ReportCell, figureDir: string): string[] {
  const k = c.work.check;
  const out: string[] = [`## ${m(c.label)}`, '', `**${verdictSentence(k.verdict, c.branches.length)}**`, ''];
  if (k.spec.changed) {
    out.push(`- The spec text changed since the ledger was written (sha256 ${code((k.spec.recordedHash ?? '').slice(0, 16))} → ${code(k.spec.currentHash.slice(0, 16))}).`);
    for (const l of k.spec.lines) out.push(`  - line ${l.line}: ${code(l.recorded ?? '(absent)')} → ${code(l.current ?? '(absent)')}`);
  }
  if (k.data.changed) out.push(`- The data changed since the ledger was written: data hash ${code(k.data.recordedHash ?? 'none')} in the ledger, ${code(k.data.currentHash ?? 'none')} now.`);
  if (k.engine.changed) out.push(`- Written by ${m(k.engine.recorded ?? '?')}, replayed by ${m(k.engine.current)}.`);
  for (const i of k.integrity) out.push(`- Edited: ${m(i)}`);
  for (const p of k.problems) out.push(`- Cannot verify: ${m(p)}`);
  for (const b of c.branches) if (b.verification) out.push(`- **${m(b.name)}**: ${m(b.verification)}`);
  out.push('');
  if (c.figures.length > 0) {
    out.push('### Figures', '');
    for (const f of c.figures) out.push(`![${m(f.title)}](${figureDir}/${f.name}.svg)`, '', `*${m(f.title)}.* ${m(f.text)}`, '');
  }
  if (c.branches.length > 0) {
    out.push('### Branches', '', '| branch | forked from | change | steps | loss at tip | held-out | tip fingerprint | replay |', '| --- | --- | --- | ---: | ---: | ---: | --- | --- |');
    for (const b of c.branches) {
      const from = b.parent === null ? '—' : `${m(b.parent)} at step ${b.forkStep}${b.restart ? ' (restarts)' : ''}`;
      const steps = b.cursor < b.tip ? `${b.tip} (shown at ${b.cursor})` : String(b.tip);
      out.push(`| ${m(b.name)} | ${from} | ${b.parent === null ? 'the spec as written' : code(b.change)} | ${steps} | ${m(fmt(b.lossAtTip))} | ${m(fmt(b.heldOutAtTip))} | ${code(b.tipFingerprint.slice(0, 16))} | ${m(b.match ?? 'not replayed')} |`);
    }
    out.push('');
  }
  for (const r of c.records) {
    out.push(`Decision record in cell ${r.cellIndex}: *${m(r.question)}* — chosen: **${m(r.chosen)}**.${r.stale.length > 0 ? ` It names tips that are no longer the ledger's (${m(r.stale.join(', '))}): write it again.` : ''}`, '');
  }
  out.push('### Findings', '');
  if (c.findings.length === 0) out.push('The ledger holds no findings for this cell.', '');
  for (const f of c.findings) {
    out.push(`- **${m(f.severity)}** ${code(f.id)}${f.branch !== '' ? ` (branch ${m(f.branch)})` : ''}: ${m(f.statement)} (measured ${m(f.measured)}, threshold ${m(f.threshold)}; source: ${m(f.source)})${f.proposal ? `; proposal ${code(f.proposal)}` : ''}`);
  }
  if (c.findings.length > 0) out.push('');
  if (c.branches.length > 0) {
    out.push('### Recipes', '');
    for (const b of c.branches) out.push(`**${m(b.name)}**${b.parent === null ? '' : ` — ${code(b.change)} from ${m(b.parent)} at step ${b.forkStep}`}`, '', fenced(b.recipeYaml, 'yaml'), '');
  }
  out.push('### Spec', '', fenced(c.work.specText, 'yaml'), '', '### Fingerprints and provenance', '');
  const l = c.work.ledger;
  out.push(`- engine: ${m(k.engine.recorded ?? '—')}${k.engine.changed ? ` (replayed by ${m(k.engine.current)})` : ''}`);
  if (l) out.push(`- ledger version ${l.version}, saved ${m(l.savedAt ?? '—')}, seed ${l.seed}, ${l.parameterCount} parameters`);
  out.push(`- spec sha256: ${code(k.spec.recordedHash ?? '—')}`, `- data hash: ${k.data.recordedHash ? code(k.data.recordedHash) : 'inline data (part of the spec)'}`);
  for (const f of k.data.files) out.push(`- file ${m(f.name)}: sha256 ${code(f.sha256)}, ${f.bytes} bytes`);
  for (const b of c.branches) out.push(`- tip of ${m(b.name)} (step ${b.tip}): ${code(b.tipFingerprint)}`);
  out.push('');
  return out;
}

/** The whole report as markdown; figures are linked from `figureDir` (relative to the report). */
export function reportMarkdown(result: NotebookCheck, cells: readonly ReportCell[], generated: string, figureDir: string): string {
  const head = reportHeading(result, generated);
  const lines = [`# ${m(head.title)}`, '', m(head.meta), '', `**${m(head.verdict)}**`, '', `*${m(PROXY_NOTE)}*`, ''];
  for (const c of cells) lines.push(...cellMarkdown(c, encodeURI(figureDir)));
  return lines.join('\n');
}
