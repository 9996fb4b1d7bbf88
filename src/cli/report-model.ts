/**
 * What `stepwell report` says about one cell, as plain data shared by the HTML and the markdown
 * writers: the spec, the branches with their patches and recipes, the findings with their
 * sources, the figures (SVG drawn from the same figure descriptions the cell draws with plotly),
 * fingerprints and provenance, and the verification. Every number comes from the ledger (checked
 * by the replay) or from the verification itself; nothing is recomputed here.
 */
import type { StepRecord } from '../core/state';
import { comparisonFigure, comparisonText, sharpnessOverlayFigure, type BranchSeries, type SharpnessSample } from '../figures/compare';
import { IMAGE_THEME, traceFigure, traceText } from '../figures/trace';
import { renderSvg } from '../figures/svg';
import { deeperReportFigures } from './report-deeper';
import { describePatch, recipeExcerpt, type SpecPatch } from '../experiment/patch';
import type { DecodedBranch } from '../ledger';
import { cellLabel, type Notebook, type NotebookCell } from './notebook';
import { branchText } from './verify';
import type { BranchCheck, CellWork } from './verify-cell';

/** One figure: its SVG, a short title, and its text alternative. */
export interface ReportFigure {
  /** File-name stem (`cell-2-loss`). */
  name: string;
  title: string;
  svg: string;
  text: string;
}

/** One branch as the report lists it. */
export interface ReportBranch {
  name: string;
  parent: string | null;
  forkStep: number | null;
  /** `KEY=VALUE, …` against the parent (empty for the root). */
  change: string;
  restart: boolean;
  tip: number;
  /** The step the branch was shown at when saved (before its tip when later steps are kept). */
  cursor: number;
  /** Losses of the tip's record as stored (may be non-finite; null when absent). */
  lossAtTip: number | null;
  heldOutAtTip: number | null;
  tipFingerprint: string;
  /** `seed`, the patched recipe and the setup keys the patches set, as YAML (what reproduces it). */
  recipeYaml: string;
  /** The replay's verdict in one line, or null when the cell could not be replayed. */
  verification: string | null;
  match: BranchCheck['match'] | null;
}

/** One finding as stored in the ledger (fields the findings rules write; any may be missing). */
export interface ReportFinding {
  /** The branch the finding concerns (ledger version 3 tags each; empty when untagged). */
  branch: string;
  id: string;
  severity: string;
  statement: string;
  measured: string;
  threshold: string;
  source: string;
  proposal: string;
}

/** A decision record found below the cell. */
export interface ReportRecord {
  cellIndex: number;
  question: string;
  chosen: string;
  /** Branches the record names whose tip fingerprint is no longer the ledger's (the record is stale). */
  stale: string[];
}

/** Everything the report says about one cell. */
export interface ReportCell {
  label: string;
  work: CellWork;
  branches: ReportBranch[];
  findings: ReportFinding[];
  figures: ReportFigure[];
  records: ReportRecord[];
}

const isObj = (v: unknown): v is Record<string, unknown> => typeof v === 'object' && v !== null && !Array.isArray(v);
const text = (v: unknown): string => (typeof v === 'string' ? v : typeof v === 'number' ? String(v) : '');

/** Sharpness points of a branch's stored readouts, keeping only well-formed ones. */
function sharpnessOf(b: DecodedBranch): SharpnessSample[] {
  return b.readouts.sharpness
    .filter((p) => Number.isInteger(p.step) && typeof p.sharpness === 'number' && (p.limit === null || typeof p.limit === 'number'))
    .map((p) => ({ step: p.step as number, sharpness: p.sharpness as number, limit: p.limit as number | null, preconditioned: p.preconditioned === true }));
}

/** A branch's records up to its tip as the figures draw them. */
function seriesOf(b: DecodedBranch): BranchSeries {
  return {
    name: b.name,
    parent: b.parent?.branch ?? null,
    forkStep: b.parent?.step ?? null,
    patchText: b.parent ? describePatch(b.patch as SpecPatch) : '',
    restart: b.restart,
    steps: b.trajectory.map((r) => r.step),
    examples: null,
    loss: b.trajectory.map((r) => r.loss),
    sharpness: sharpnessOf(b)
  };
}

/** The findings stored in the ledger, as text fields (numbers as written). */
function findingsOf(raw: readonly Record<string, unknown>[]): ReportFinding[] {
  return raw.map((f) => {
    const p = isObj(f.proposal) ? f.proposal : null;
    const set = p && isObj(p.set) ? describePatch(p.set as SpecPatch) : '';
    return {
      branch: typeof f.branch === 'string' ? f.branch : '',
      id: text(f.id),
      severity: text(f.severity),
      statement: text(f.statement),
      measured: text(f.measured),
      threshold: text(f.threshold),
      source: text(f.source),
      proposal: p ? `from step ${text(p.atStep)}: ${set}` : ''
    };
  });
}

/** Decision records below the cell (cells whose record metadata names this cell's id). */
function recordsOf(nb: Notebook, cell: NotebookCell, branches: readonly ReportBranch[]): ReportRecord[] {
  if (cell.id === null) return [];
  return nb.cells.flatMap((c) => {
    const r = c.record;
    if (!isObj(r) || r.cell !== cell.id) return [];
    const named = Array.isArray(r.branches) ? r.branches.filter(isObj) : [];
    const stale = named.filter((b) => branches.find((x) => x.name === b.name)?.tipFingerprint !== b.fingerprint).map((b) => text(b.name));
    return [{ cellIndex: c.index, question: text(r.question), chosen: text(r.chosen), stale }];
  });
}

/** The figures of a cell: losses overlaid, the sharpness against each limit (when measured), and the active branch's held-out loss. */
function figuresOf(cell: NotebookCell, decoded: readonly DecodedBranch[], active: string): ReportFigure[] {
  const stem = `cell-${cell.index}`;
  const series = decoded.map(seriesOf);
  const out: ReportFigure[] = [];
  const lossText = comparisonText(series, 'step');
  const loss = comparisonFigure(series, 'step', IMAGE_THEME, { width: 760, height: 320 });
  out.push({ name: `${stem}-loss`, title: 'Training loss of every branch', text: lossText, svg: renderSvg(loss, { id: `${stem}-loss`, title: 'Training loss of every branch', description: lossText, width: 760 }) });
  if (series.some((s) => s.sharpness.length > 0)) {
    const fig = sharpnessOverlayFigure(series, IMAGE_THEME);
    const measured = series.filter((s) => s.sharpness.length > 0);
    const alt = `Sharpness measured on ${measured.map((s) => `${s.name} (${s.sharpness.length} points)`).join(', ')}, each drawn with its stability limit (dashed).`;
    out.push({ name: `${stem}-sharpness`, title: 'Sharpness against the stability limit', text: alt, svg: renderSvg({ ...fig, layout: { ...fig.layout, height: 280 } }, { id: `${stem}-sharpness`, title: 'Sharpness against the stability limit', description: alt, width: 760 }) });
  }
  const shown = decoded.find((b) => b.name === active) ?? decoded[0];
  if (shown !== undefined && shown.trajectory.some((r: StepRecord) => r.heldOutLoss !== undefined)) {
    const cursor = shown.cursor < shown.head.step ? shown.cursor : undefined;
    const fig = traceFigure(shown.trajectory, IMAGE_THEME, { height: 280, cursor });
    const alt = `Branch ${shown.name}. ${traceText(shown.trajectory, cursor)}`;
    out.push({ name: `${stem}-held-out`, title: `Training and held-out loss of ${shown.name}`, text: alt, svg: renderSvg(fig, { id: `${stem}-held-out`, title: `Training and held-out loss of ${shown.name}`, description: alt, width: 760 }) });
  }
  if (shown !== undefined) out.push(...deeperReportFigures(stem, shown));
  return out;
}

/** Builds the report of one verified cell. */
export function reportCell(nb: Notebook, cell: NotebookCell, work: CellWork): ReportCell {
  const label = cellLabel(cell);
  const restored = work.restored;
  const ledger = work.ledger;
  if (restored === null || ledger === null) return { label, work, branches: [], findings: ledger ? findingsOf(ledger.findings) : [], figures: [], records: [] };
  const branches = restored.branches.map((b): ReportBranch => {
    const tip = b.trajectory[b.trajectory.length - 1];
    const excerpt = recipeExcerpt(work.specText, restored.chains.get(b.name) ?? []);
    const check = work.check.branches.find((c) => c.name === b.name);
    return {
      name: b.name,
      parent: b.parent?.branch ?? null,
      forkStep: b.parent?.step ?? null,
      change: b.parent ? describePatch(b.patch as SpecPatch) : '',
      restart: b.restart,
      tip: b.head.step,
      cursor: b.cursor,
      lossAtTip: tip?.loss ?? null,
      heldOutAtTip: tip?.heldOutLoss ?? null,
      tipFingerprint: b.head.fingerprint,
      recipeYaml: excerpt.ok ? excerpt.yaml : `# the recipe cannot be written: ${excerpt.errors.map((e) => e.message).join('; ')}\n`,
      verification: check ? branchText(check) : null,
      match: check?.match ?? null
    };
  });
  return {
    label,
    work,
    branches,
    findings: findingsOf(ledger.findings),
    figures: figuresOf(cell, restored.branches, ledger.activeBranch),
    records: recordsOf(nb, cell, branches)
  };
}

