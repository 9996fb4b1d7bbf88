/** `stepwell diagnose SPEC`: step the recipe, gather the evidence, and print the findings with their proposals. */
import { diagnoseExperiment, type Finding, type Proposal } from '../core/probe/findings';
import { loadExperiment, positiveInt, toJson, type CommandResult } from './io';
import { MAX_STEPS } from './run';

/** Flags of `diagnose`. */
export interface DiagnoseFlags {
  /** `NAME=VALUE` size limits over the defaults (`experiment/limits.ts`). */
  limit?: string[];
  json?: boolean;
  steps?: string;
  set?: string[];
}

/** A proposal as `stepwell run --branch` takes it: `STEP:KEY=VALUE,KEY=VALUE`. */
export function branchArgument(p: Proposal): string {
  return `${p.atStep}:${Object.entries(p.set).map(([k, v]) => `${k}=${String(v)}`).join(',')}`;
}

/** The JSON form of one finding: exactly the contract's keys, in order (non-finite numbers become strings through `toJson`). */
function findingJson(f: Finding): Record<string, unknown> {
  return {
    id: f.id, severity: f.severity, layer: f.layer, step: f.step, measured: f.measured, threshold: f.threshold,
    source: f.source, statement: f.statement, proposal: f.proposal === null ? null : { atStep: f.proposal.atStep, set: { ...f.proposal.set } },
  };
}

function number(x: number): string {
  if (!Number.isFinite(x)) return Number.isNaN(x) ? 'NaN' : x > 0 ? '∞' : '−∞';
  return Math.abs(x) >= 1e-3 && Math.abs(x) < 1e5 ? String(Number(x.toPrecision(3))) : x.toExponential(2);
}

/**
 * Runs the command. Exit code 0 whatever the recipe does: a diverging recipe is a finding, not a
 * failure of the command.
 */
export function diagnoseCommand(path: string, flags: DiagnoseFlags): CommandResult {
  const steps = positiveInt(flags.steps, '--steps', 100, MAX_STEPS);
  const { experiment, warnings } = loadExperiment(path, flags.set, flags.limit);
  const r = diagnoseExperiment(experiment, { steps });
  if (flags.json) {
    return { out: toJson({ steps: r.steps, final: { loss: r.final.loss }, findings: r.findings.map(findingJson) }) + '\n', warnings, code: 0 };
  }
  const lines = [`${r.steps} steps; final loss ${number(r.final.loss)}; ${r.findings.length === 0 ? 'no findings' : `${r.findings.length} finding${r.findings.length === 1 ? '' : 's'}`}`];
  for (const f of r.findings) {
    const where = [f.layer !== null ? `layer ${f.layer}` : '', f.step !== null ? `step ${f.step}` : ''].filter((s) => s !== '').join(', ');
    lines.push('', `${f.severity.toUpperCase().padEnd(8)} ${f.id}${where ? ` (${where})` : ''}: measured ${number(f.measured)} against ${number(f.threshold)}`);
    lines.push(`  ${f.statement}`, `  threshold: ${f.source}`);
    if (f.proposal !== null) lines.push(`  try: stepwell run ${path} --steps ${r.steps} --branch ${branchArgument(f.proposal)}`);
  }
  lines.push('', 'A small proxy model: these findings describe this setup at this scale, not the full-size run.');
  return { out: lines.join('\n') + '\n', warnings, code: 0 };
}
