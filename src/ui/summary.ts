/**
 * Text the cell shows and writes: the status line, the small summary carried by our mime
 * bundle, the markdown fallback that any viewer without Stepwell renders, and the audit
 * table's rows. Pure functions of plain data.
 */
import type { StepRecord } from '../core/state';
import type { AuditResult, AuditVerdict } from '../core/probe/gradcheck';
import type { BranchInfo, SessionSummary, SpecProblem, VerifyResult } from '../worker/protocol';
import { fmt } from '../figures/format';
import { IMAGE_THEME, traceFigure, traceText } from '../figures/trace';
import { renderSvg, svgDataUrl, thinned } from '../figures/svg';

/** Our mime type: its renderer is the live cell widget. */
export const STEPWELL_MIME = 'application/vnd.stepwell.cell+json';

/** The plain note shown in the widget and in every static summary. */
export const PROXY_NOTE =
  'Readouts come from a small proxy experiment run in the browser. They are evidence about this ' +
  'setup and recipe, not a guarantee of how the full-scale model and data will behave.';

/** One branch in the mime bundle's summary (JSON-safe). */
export interface BranchLine {
  name: string;
  parent: string | null;
  forkStep: number | null;
  patchText: string;
  step: number;
  tip: number;
  loss: number | null;
}

/** Summary carried by our mime bundle (JSON-safe: non-finite numbers become null). */
export interface CellSummary {
  /** Format version of this payload (2 adds the branches; 1 had none). */
  version: 2;
  /** The active branch. */
  branch: string;
  branches: BranchLine[];
  step: number;
  loss: number | null;
  heldOutLoss: number | null;
  recipe: string;
  setup: string;
  fingerprint: string;
  parameterCount: number;
}

const jsonNumber = (v: number | undefined): number | null => (v !== undefined && Number.isFinite(v) ? v : null);

export { fmt };

/** Short fingerprint for display (first 12 hex digits). */
export function shortPrint(fingerprint: string): string {
  return fingerprint.slice(0, 12);
}

/** Builds the mime-bundle summary from the session summary and the trajectory's last record. */
export function cellSummary(summary: SessionSummary, last: StepRecord | undefined): CellSummary {
  return {
    version: 2,
    branch: summary.branch,
    branches: summary.branches.map((b: BranchInfo) => ({ name: b.name, parent: b.parent, forkStep: b.forkStep, patchText: b.patchText, step: b.step, tip: b.tip, loss: jsonNumber(b.loss) })),
    step: summary.step,
    loss: jsonNumber(last?.loss),
    heldOutLoss: jsonNumber(last?.heldOutLoss),
    recipe: summary.recipe,
    setup: summary.setup,
    fingerprint: summary.fingerprint,
    parameterCount: summary.parameterCount
  };
}

/** Escapes characters that markdown would interpret, so user text stays literal. */
export function escapeMarkdown(text: string): string {
  return text.replace(/[\\`*_[\]<>|#~]/g, c => `\\${c}`);
}

/**
 * The loss trace of the shown branch as an SVG image for the markdown fallback (drawn from the
 * same figure description as the cell's plotly trace, in the fixed light theme), with its text
 * alternative; null without records.
 */
export function lossImage(trajectory: readonly StepRecord[], cursor?: number): { svg: string; alt: string } | null {
  if (trajectory.length === 0) return null;
  const alt = traceText(trajectory, cursor);
  const fig = thinned(traceFigure(trajectory, IMAGE_THEME, { height: 220, cursor }));
  return { svg: renderSvg(fig, { width: 560, id: 'stepwell-loss', title: 'Training loss per step', description: alt }), alt };
}

/**
 * The `text/markdown` fallback: a static summary readable in any notebook viewer; `image` (the
 * loss trace, {@link lossImage}) is embedded as a `data:` URL, which JupyterLab's markdown
 * renderer, nbconvert's HTML export and GitHub's notebook view show without Stepwell.
 */
export function markdownSummary(s: CellSummary, image: { svg: string; alt: string } | null = null): string {
  const lines = [
    `**Stepwell experiment** at step ${s.step}${s.branches.length > 1 ? ` of branch ${escapeMarkdown(s.branch)}` : ''}`,
    '',
    `| | |`,
    `| --- | --- |`,
    `| training loss | ${escapeMarkdown(fmt(s.loss))} |`
  ];
  if (s.heldOutLoss !== null) lines.push(`| held-out loss | ${escapeMarkdown(fmt(s.heldOutLoss))} |`);
  lines.push(
    `| setup | ${escapeMarkdown(s.setup)} (${s.parameterCount} parameters) |`,
    `| recipe | ${escapeMarkdown(s.recipe)} |`,
    `| fingerprint | \`${s.fingerprint.replace(/[^0-9a-f]/g, '')}\` |`,
    ''
  );
  if (image !== null) lines.push(`![${escapeMarkdown(image.alt)}](${svgDataUrl(image.svg)})`, '');
  if (s.branches.length > 1) {
    lines.push(`**Branches** (${s.branches.length}):`, '', '| branch | forked from | change | step | training loss |', '| --- | --- | --- | ---: | ---: |');
    for (const b of s.branches) {
      const from = b.parent === null ? '—' : `${escapeMarkdown(b.parent)} at step ${b.forkStep}`;
      const step = b.step < b.tip ? `${b.step} (of ${b.tip})` : `${b.step}`;
      lines.push(`| ${escapeMarkdown(b.name)}${b.name === s.branch ? ' (shown)' : ''} | ${from} | ${b.parent === null ? 'the spec as written' : escapeMarkdown(b.patchText)} | ${step} | ${escapeMarkdown(fmt(b.loss))} |`);
    }
    lines.push('');
  }
  lines.push(
    `*${escapeMarkdown(PROXY_NOTE)}*`,
    '',
    '*Open this notebook in JupyterLab with the Stepwell extension to step, audit and verify the experiment.*'
  );
  return lines.join('\n');
}

/** Inputs of the status line. */
export interface StatusInputs {
  step: number;
  /** The furthest step of the branch, when later steps are kept after `step`. */
  tip?: number;
  last: StepRecord | undefined;
  /** Mean wall time per step of the last stepping action, ms. */
  msPerStep?: number;
  /** Without `msPerStep`: an upper bound on it, when the steps were timed but too fast to measure ({@link msBound}). */
  msBelow?: number;
  /** Ledger size in bytes. */
  ledgerBytes?: number;
}

/** Human size: `812 B`, `14.2 kB`, `1.3 MB`. */
export function bytes(n: number): string {
  if (n < 1000) return `${n} B`;
  if (n < 1e6) return `${(n / 1000).toFixed(1)} kB`;
  return `${(n / 1e6).toFixed(1)} MB`;
}

/** A time per step as the status line writes it: `4.2 µs`, `0.42 ms`, `12.3 ms`. */
function perStep(ms: number): string {
  return ms < 0.1 ? `${(ms * 1000).toFixed(1)} µs` : ms < 1 ? `${ms.toFixed(2)} ms` : `${ms.toFixed(1)} ms`;
}

/** The status line: `step 40 · loss 0.0132 · held-out 0.0171 · 0.42 ms/step · ledger 14.2 kB`. */
export function statusLine(s: StatusInputs): string {
  const parts = [`step ${s.step}${s.tip !== undefined && s.tip > s.step ? ` (of ${s.tip})` : ''}`, `loss ${fmt(s.last?.loss)}`];
  if (s.last?.heldOutLoss !== undefined) parts.push(`held-out ${fmt(s.last.heldOutLoss)}`);
  if (s.msPerStep !== undefined && Number.isFinite(s.msPerStep)) parts.push(`${perStep(s.msPerStep)}/step`);
  else if (s.msBelow !== undefined && Number.isFinite(s.msBelow)) parts.push(`< ${perStep(s.msBelow)}/step`);
  if (s.ledgerBytes !== undefined) parts.push(`ledger ${bytes(s.ledgerBytes)}`);
  return parts.join(' · ');
}

/**
 * Step records the status line's timing is the mean of: the branch's last ones, after a
 * stepping action and after a reload alike, so the same records give the same figure (a
 * request's own elapsed time is one noisy sample when it is a single step).
 */
export const TIMING_WINDOW = 200;

/**
 * Least total wall time (ms) a timing is computed from: browsers round `performance.now()` to
 * about 0.1 ms, so one fast update reads 0 or 0.1 ms and its "mean" says nothing.
 */
export const MIN_TIMED_MS = 5;

/**
 * Mean wall time per step (ms) over the records after step 0, or undefined when their total
 * time is below {@link MIN_TIMED_MS} (too short to measure with the browser's timer).
 */
export function meanMs(records: readonly StepRecord[]): number | undefined {
  const timed = records.filter(r => r.step > 0 && Number.isFinite(r.ms));
  const total = timed.reduce((a, r) => a + r.ms, 0);
  if (timed.length === 0 || total < MIN_TIMED_MS) return undefined;
  return total / timed.length;
}

/**
 * When the records after step 0 were timed but their total is below {@link MIN_TIMED_MS} (so
 * {@link meanMs} gives none): the bound that total sets on the mean, MIN_TIMED_MS / count.
 * Undefined when no record is timed or a mean can be given.
 */
export function msBound(records: readonly StepRecord[]): number | undefined {
  const timed = records.filter(r => r.step > 0 && Number.isFinite(r.ms));
  if (timed.length === 0 || meanMs(records) !== undefined) return undefined;
  return MIN_TIMED_MS / timed.length;
}

/** One spec problem as `line N: message` (or `path: message` when the line is unknown). */
export function problemLine(p: SpecProblem): string {
  const where = p.line !== undefined ? `line ${p.line}${p.col !== undefined ? `:${p.col}` : ''}` : p.path || 'spec';
  const path = p.line !== undefined && p.path ? ` (${p.path})` : '';
  return `${where}${path}: ${p.message}`;
}

/** Why a replay can differ before the first update. */
export const STEP0_HINT =
  'The starting point already differs: the spec or its data changed, or the ledger was written by Stepwell 0.1, ' +
  'whose arithmetic (exp, tanh, log, cos) depended on the JavaScript engine; later versions compute the same bits in every engine.';

/** The verify outcome as one sentence (`named`: say which branch). */
export function verifyLine(v: VerifyResult, named = false): string {
  const who = named ? `Branch ${v.branch}: replayed` : 'Replayed';
  if (v.match === 'bit-identical') {
    return `${who} ${v.steps} steps from the seed: bit-identical (fingerprint ${shortPrint(v.actual)}).`;
  }
  const at = v.firstDifferingStep ?? v.steps;
  const text =
    `${who} ${v.steps} steps from the seed: differs at step ${at} ` +
    `(expected ${shortPrint(v.expected)}, replay reached ${shortPrint(v.actual)}).`;
  return at === 0 ? `${text} ${STEP0_HINT}` : text;
}

/** The outcome of verifying several branches: one sentence each, the branch named when there are several. */
export function verifyLines(results: readonly VerifyResult[]): string {
  return results.map(v => verifyLine(v, results.length > 1)).join(' ');
}

/** A display row of the gradient-audit table. */
export interface AuditDisplayRow {
  /** Layer label and the blocks it covers. */
  name: string;
  max: string;
  median: string;
  /** Block and position of the worst entry inside it, e.g. `layers[1].weight[2, 0]`. */
  worst: string;
  /** `checked / total` entries. */
  checked: string;
  verdict: AuditVerdict;
}

/** Formats audit rows for the table (the verdicts come from the engine; nothing recomputed). */
export function auditRows(a: AuditResult): AuditDisplayRow[] {
  return a.layers.map(l => ({
    name: l.layer >= 0 ? `layer ${l.layer} (${l.blocks.join(', ')})` : l.blocks.join(', '),
    max: l.maxRelError.toExponential(2),
    median: l.medianRelError.toExponential(2),
    worst: l.worstAt.length > 0 ? `${l.worstBlock}[${l.worstAt.join(', ')}]` : '—',
    checked: `${l.checked} / ${l.total}`,
    verdict: l.verdict
  }));
}

/** The markdown fallback of a cell whose ledger cannot be read (the message escaped). */
export function unreadableMarkdown(message: string): string {
  return ['**Stepwell experiment**: the saved ledger of this cell cannot be read.', '', escapeMarkdown(message), '', 'The spec text and the stored metadata are untouched; run the cell in Stepwell to start over.'].join('\n');
}

/** The markdown fallback for a cell whose spec does not parse yet. */
export function errorMarkdown(lines: string[]): string {
  return ['**Stepwell experiment**: the spec has problems.', '', ...lines.map(l => `- ${escapeMarkdown(l)}`), '', `*${escapeMarkdown(PROXY_NOTE)}*`].join('\n');
}
