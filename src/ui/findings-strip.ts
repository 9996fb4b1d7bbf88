/**
 * The findings strip above the readouts: one row per finding of the shown branch — severity (as a
 * word, not only a colour), the statement, the measured number against its threshold, the source
 * (on hover, and in a disclosure that keyboards and screen readers reach) and, where the finding
 * proposes a change, a "Try as branch" button (or "Show branch X" once a branch tried it). The
 * words come from the findings rules in core and the formatting here is the cell's; nothing is
 * judged here.
 */
import type { Finding } from '../worker/protocol';
import { button, el } from './dom';
import { fmt } from './summary';

/** CSS classes of the strip. */
export namespace FindingsClass {
  export const strip = 'sw-Findings';
  export const item = 'sw-Finding';
  export const severity = 'sw-FindingSeverity';
  export const source = 'sw-FindingSource';
}

/** The caveat every proposal carries in the strip. */
export const PROPOSAL_CAVEAT =
  'Proposals are measured on this small proxy experiment: a guess to try here and confirm at full scale, not a prescription.';

/**
 * A threshold's source as one phrase: `Nocedal & Wright …` for a published source (its `source: `
 * tag dropped), `common practice (no single source): …` and `… from memory` as written.
 */
export function sourceText(source: string): string {
  return source.startsWith('source: ') ? source.slice('source: '.length) : source;
}

/** A proposal's keys as `lr=0.0123, model.gain=1`. */
export function proposalText(set: Readonly<Record<string, unknown>>): string {
  return Object.entries(set).map(([k, v]) => `${k}=${String(v)}`).join(', ');
}

/** How a finding's measured number and threshold read: a share in %, a factor with ×, or a plain number. */
type QuantityUnit = 'plain' | 'percent' | 'times';

/**
 * What each rule's measured number is (the `measures` of the rules in core/probe/findings/rules,
 * shortened for the strip) and how it reads. A record over every id, so a new rule is a compile
 * error until it is named here.
 */
export const FINDING_QUANTITY: Readonly<Record<Finding['id'], { name: string; unit: QuantityUnit }>> = {
  'step-size-unstable': { name: 'learning rate', unit: 'plain' },
  diverged: { name: 'loss against its start', unit: 'times' },
  plateau: { name: 'loss decrease over the window', unit: 'percent' },
  'saturated-units': { name: 'saturated share', unit: 'percent' },
  'dead-units': { name: 'dead share', unit: 'percent' },
  'init-scale': { name: 'initial spread against the fan-in rule', unit: 'times' },
  'inputs-unscaled': { name: 'feature spread or offset ratio', unit: 'times' },
  'duplicate-rows': { name: 'repeated rows', unit: 'percent' },
  'update-ratio-high': { name: '‖ΔW‖/‖W‖', unit: 'plain' },
  'update-ratio-low': { name: '‖ΔW‖/‖W‖', unit: 'plain' },
  'vanishing-gradient': { name: 'gradient norm against the last layer\'s', unit: 'times' },
  'negative-curvature': { name: '|λmin| / λmax', unit: 'plain' },
  'ill-conditioned': { name: 'condition number', unit: 'plain' },
  overfitting: { name: 'held-out loss above its minimum', unit: 'percent' },
  'gradient-mismatch': { name: 'largest relative error', unit: 'plain' }
};

/** A measured number or threshold in its unit: `94.6 %`, `12200×`, `0.736`. */
function inUnit(x: number, unit: QuantityUnit): string {
  switch (unit) {
    case 'plain':
      return fmt(x);
    case 'percent':
      return Number.isFinite(x) ? `${fmt(Number((100 * x).toPrecision(3)))} %` : fmt(x);
    case 'times':
      return Number.isFinite(x) ? `${fmt(Number(x.toPrecision(3)))}×` : fmt(x);
  }
}

/**
 * The "measured against threshold" line of a finding with what was measured and its unit, e.g.
 * `learning rate 0.9 · threshold 0.736015` or `saturated share 94.6 % · threshold 30 %`.
 */
export function measuredLine(f: Finding): string {
  const q = FINDING_QUANTITY[f.id];
  return `${q.name} ${inUnit(f.measured, q.unit)} · threshold ${inUnit(f.threshold, q.unit)}`;
}

/** Where a finding was measured: `step 14, layer 2`, `the whole model`, `the data`. */
export function whereLine(f: Finding): string {
  const parts = [f.step !== null ? `step ${f.step}` : null, f.layer !== null ? `layer ${f.layer}` : null].filter((x): x is string => x !== null);
  return parts.length > 0 ? parts.join(', ') : 'the data';
}

/** Actions of the strip. */
export interface StripActions {
  /** "Try as branch" (or "Show branch") on finding `index`. */
  tryFinding: (index: number) => void;
  /** The "more findings" disclosure was opened or closed (the widget keeps it across rebuilds). */
  toggleMore: (open: boolean) => void;
}

/** Findings listed before the rest fold into "more findings" (every problem is always listed). */
export const FINDINGS_SHOWN = 3;

/** How many of `findings` (most severe first) are listed open: every problem, and at least {@link FINDINGS_SHOWN}. */
export function shownCount(findings: readonly Finding[]): number {
  return Math.min(findings.length, Math.max(FINDINGS_SHOWN, findings.filter(f => f.severity === 'problem').length));
}

/** `2 warnings, 1 info` for the folded findings. */
export function foldedText(findings: readonly Finding[]): string {
  const n = (sev: Finding['severity']): number => findings.filter(f => f.severity === sev).length;
  return ([['problem', 'problems'], ['warning', 'warnings'], ['info', 'info']] as const)
    .map(([sev, many]) => [n(sev), sev, many] as const)
    .filter(([k]) => k > 0)
    .map(([k, one, many]) => `${k} ${k === 1 ? one : many}`)
    .join(', ');
}

/** Builds the strip (an empty strip when there are no findings; the caller hides it). */
export function findingsStrip(findings: readonly Finding[], tried: readonly (string | null)[], busy: boolean, actions: StripActions, stale: string | null, moreOpen = false): HTMLElement {
  const box = el('section', FindingsClass.strip);
  box.setAttribute('aria-label', `Findings (${findings.length})`);
  if (findings.length === 0) return box;
  const head = el('p', 'sw-FindingsHead', `${findings.length} finding${findings.length === 1 ? '' : 's'} on this branch${stale !== null ? ` (${stale})` : ''}:`);
  const list = el('ul', 'sw-FindingsList');
  const more = el('ul', 'sw-FindingsList');
  const open = shownCount(findings);
  findings.forEach((f, i) => {
    const item = el('li', `${FindingsClass.item} sw-mod-${f.severity}`);
    item.dataset.finding = f.id;
    const sev = el('span', FindingsClass.severity, f.severity);
    const id = el('code', 'sw-FindingId', f.id);
    const where = el('span', 'sw-FindingWhere', whereLine(f));
    const statement = el('span', 'sw-FindingStatement', f.statement);
    const measured = el('span', 'sw-FindingMeasured', measuredLine(f));
    measured.title = `Source of the threshold: ${sourceText(f.source)}`;
    // The source on hover (title) and, for keyboards and screen readers, in a disclosure.
    const source = el('details', FindingsClass.source);
    source.append(el('summary', undefined, 'source'), el('span', undefined, sourceText(f.source)));
    const line = el('div', 'sw-FindingLine');
    line.append(sev, id, where, statement);
    const meta = el('div', 'sw-FindingMeta');
    meta.append(measured, source);
    item.append(line, meta);
    if (f.proposal !== null) {
      const p = f.proposal;
      const t = tried[i] ?? null;
      const prop = el('div', 'sw-FindingProposal');
      prop.append(el('span', 'sw-Label', `Proposal: from step ${p.atStep}, ${proposalText(p.set)}`));
      const b = t === null
        ? button('Try as branch', `Fork a branch at step ${p.atStep} with ${proposalText(p.set)} and show it`, () => actions.tryFinding(i), 'sw-Button-try')
        : button(`Show branch ${t}`, `Branch ${t} already tries this proposal: show it`, () => actions.tryFinding(i), 'sw-Button-try sw-mod-tried');
      b.disabled = busy;
      b.setAttribute('aria-label', t === null ? `Try the proposal of ${f.id} as a branch: from step ${p.atStep}, ${proposalText(p.set)}` : `Show branch ${t}, which tries the proposal of ${f.id}`);
      prop.append(b);
      item.append(prop);
    }
    (i < open ? list : more).appendChild(item);
  });
  box.append(head, list);
  if (open < findings.length) {
    const folded = el('details', 'sw-FindingsMore');
    folded.open = moreOpen;
    folded.append(el('summary', undefined, `${findings.length - open} more: ${foldedText(findings.slice(open))}`), more);
    folded.addEventListener('toggle', () => actions.toggleMore(folded.open));
    box.append(folded);
  }
  if (findings.some(f => f.proposal !== null)) box.append(el('p', 'sw-FindingsCaveat', PROPOSAL_CAVEAT));
  return box;
}
