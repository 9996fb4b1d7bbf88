/**
 * The decision record: a markdown cell written below a stepwell cell that says which question was
 * asked, which branches were compared (what each changed), the evidence (numbers at matched
 * steps, findings with their sources), the chosen branch with its recipe as YAML, the
 * fingerprints a colleague can verify, and the comparison figure as a cell attachment. Plain
 * markdown (pipe tables, a fenced YAML block, one image): it reads the same in JupyterLab without
 * Stepwell, in nbconvert's HTML and markdown exports, and as plain text. Pure: the numbers and
 * verdicts come from the worker's comparison; this only writes them down.
 */
import type { BranchComparison, BranchTrace } from '../worker/protocol';
import type { LossVerdict, MatchedCell } from '../core/session';
import { escapeMarkdown, fmt, PROXY_NOTE } from './summary';
import { measuredLine, sourceText } from './findings-strip';

/** Cell-metadata key that marks a decision record (and names the stepwell cell it belongs to). */
export const RECORD_KEY = 'stepwell-record';

/** Attachment name of the comparison figure. */
export const RECORD_IMAGE = 'stepwell-comparison.png';

/** What a record cell carries under {@link RECORD_KEY}. */
export interface RecordMeta {
  version: 1;
  /** Id of the stepwell cell the record belongs to (nbformat 4.5 cell id), or null when it has none. */
  cell: string | null;
  question: string;
  chosen: string;
  /** The compared branches with the step and fingerprint of their tips. */
  branches: { name: string; tip: number; fingerprint: string }[];
}

/** Inputs of {@link decisionRecord}. */
export interface RecordInput {
  question: string;
  /** The chosen branch (one of the compared). */
  chosen: string;
  comparison: BranchComparison;
  /** The compared branches; their findings (with sources) come from here. */
  traces: readonly BranchTrace[];
  /** Attachment name of the figure, or null when there is no image. */
  image: string | null;
  /** Text alternative of the figure. */
  figureText: string;
}

const VERDICT: Record<LossVerdict, string> = {
  reference: 'reference',
  better: 'lower',
  worse: 'higher',
  same: 'same',
  diverged: 'not finite'
};

/** Text in a table cell: markdown escaped, newlines folded. */
const cell = (text: string): string => escapeMarkdown(text.replace(/\s*\n\s*/g, ' '));

/** A number for a table (`fmt`, escaped). */
const num = (v: number | null | undefined): string => escapeMarkdown(fmt(v));

function row(values: string[]): string {
  return `| ${values.join(' | ')} |`;
}

function sharpnessText(c: MatchedCell): string {
  if (c.sharpness === null) return 'not measured';
  if (c.limit === null) return `${num(c.sharpness)} (no limit applies)`;
  return `${num(c.sharpness)} / ${num(c.limit)} (${c.stable ? 'within' : 'above'})`;
}

/** A proposal as flat keys, e.g. `lr=0.0123, model.gain=1`. */
function proposalText(set: Readonly<Record<string, unknown>>): string {
  return Object.entries(set).map(([k, v]) => `${k}=${String(v)}`).join(', ');
}

/**
 * One line per finding of each compared branch: branch, severity, id, step, layer, the statement,
 * the number against its threshold, the source, and the proposal with the branch that tried it.
 */
function findingLines(traces: readonly BranchTrace[]): string[] {
  const lines: string[] = [];
  for (const t of traces) {
    t.findings.forEach((f, i) => {
      const where = [`branch ${t.name}`, f.step !== null ? `step ${f.step}` : null, f.layer !== null ? `layer ${f.layer}` : null].filter((x) => x !== null).join(', ');
      const tried = t.tried[i] ?? null;
      const proposal = f.proposal === null ? ''
        : ` Proposal: from step ${f.proposal.atStep}, ${escapeMarkdown(proposalText(f.proposal.set))}${tried !== null ? ` — tried as branch ${escapeMarkdown(tried)}` : ''}.`;
      lines.push(`- **${escapeMarkdown(f.severity)} \`${f.id.replace(/`/g, '')}\`** (${escapeMarkdown(where)}): ${escapeMarkdown(f.statement)} ` +
        `Measured: ${escapeMarkdown(measuredLine(f))}. Source: ${escapeMarkdown(sourceText(f.source))}.${proposal}`);
    });
  }
  return lines.length > 0 ? lines : ['The compared branches have no findings.'];
}

/**
 * The record's markdown (see the module comment).
 *
 * @throws when `chosen` is not among the compared branches.
 */
export function decisionRecord(input: RecordInput): string {
  const { comparison: c, traces } = input;
  const chosen = traces.find((t) => t.name === input.chosen);
  if (chosen === undefined) throw new Error(`the chosen branch '${input.chosen}' is not among the compared branches (${traces.map((t) => t.name).join(', ')})`);
  const out: string[] = [];
  out.push(`## Decision record: ${cell(input.question)}`, '');
  out.push(`**Chosen: branch \`${chosen.name.replace(/`/g, '')}\`** — ${escapeMarkdown(chosen.recipe)}${chosen.parent !== null ? `, forked from ${escapeMarkdown(chosen.parent)} at step ${chosen.forkStep} with ${escapeMarkdown(chosen.patchText)}` : ' (the spec as written)'}.`, '');
  if (c.best !== null) {
    out.push(`At step ${c.best.step}, the last step every compared branch reached, the lowest training loss is on **${escapeMarkdown(c.best.branch)}**.`, '');
  }

  out.push('### Branches compared', '');
  out.push(row(['branch', 'forked from', 'change against its parent', 'recipe', 'steps']), row(['---', '---', '---', '---', '---']));
  for (const t of traces) {
    out.push(row([cell(t.name), t.parent === null ? '—' : `${cell(t.parent)} at step ${t.forkStep}`, t.parent === null ? 'the spec as written' : cell(t.patchText) + (t.restart ? ' (restarted at step 0)' : ''), cell(t.recipe), `${t.tip}`]));
  }
  out.push('');

  out.push(`### Evidence at matched steps (against ${escapeMarkdown(c.reference)})`, '');
  if (c.steps.length === 0) out.push('The branches share no recorded step to compare at.');
  else {
    out.push(row(['step', 'branch', 'training loss', 'against reference', 'held-out loss', '‖g‖', '‖ΔW‖/‖W‖ per layer', 'sharpness / limit']), row(['---:', '---', '---:', '---', '---:', '---:', '---', '---']));
    for (const s of c.steps) {
      for (const x of s.cells) {
        out.push(row([`${s.step}`, cell(x.branch), num(x.loss), VERDICT[x.verdict], num(x.heldOutLoss), num(x.gradNorm), x.updateRatios.length === 0 ? '—' : x.updateRatios.map((v) => num(v)).join(', '), sharpnessText(x)]));
      }
    }
  }
  out.push('');
  const crossings = c.crossings.map((x) =>
    x.measured === 0
      ? `- ${escapeMarkdown(x.branch)}: sharpness not tracked.`
      : x.step === null
        ? `- ${escapeMarkdown(x.branch)}: the sharpness stayed within the stability limit over ${x.measured} measurements.`
        : `- ${escapeMarkdown(x.branch)}: the sharpness first exceeded the stability limit at step ${x.step} (${num(x.sharpness)} > ${num(x.limit)}).`
  );
  out.push(...crossings, '');

  out.push('### Findings', '', ...findingLines(traces), '');
  if (traces.some((t) => t.findings.some((f) => f.proposal !== null))) {
    out.push('*Proposals are measured on this small proxy experiment: a guess to confirm at full scale, not a prescription.*', '');
  }

  if (input.image !== null) {
    out.push('### Comparison', '', `![${cell(input.figureText)}](attachment:${input.image})`, '');
  }
  out.push(`*Figure: ${escapeMarkdown(input.figureText)}*`, '');

  out.push(`### Recipe of ${escapeMarkdown(chosen.name)}`, '', '```yaml', chosen.recipeYaml.replace(/```/g, "'''").trimEnd(), '```', '');

  out.push('### Fingerprints', '');
  out.push(row(['branch', 'step', 'SHA-256 of the state (weights, optimizer, generator, step)']), row(['---', '---:', '---']));
  for (const t of traces) out.push(row([cell(t.name), `${t.tip}`, `\`${t.tipFingerprint.replace(/[^0-9a-f]/g, '')}\``]));
  out.push('');
  out.push('To check this record, open the notebook in JupyterLab with Stepwell and press **Verify** on each branch: it replays the branch from the seed and compares these fingerprints bit for bit.', '');
  out.push(`*${escapeMarkdown(PROXY_NOTE)}*`);
  return out.join('\n') + '\n';
}

/** The metadata of a record cell. */
export function recordMeta(cellId: string | null, input: Pick<RecordInput, 'question' | 'chosen' | 'traces'>): RecordMeta {
  return { version: 1, cell: cellId, question: input.question, chosen: input.chosen, branches: input.traces.map((t) => ({ name: t.name, tip: t.tip, fingerprint: t.tipFingerprint })) };
}
