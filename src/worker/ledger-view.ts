/**
 * What a stored ledger shows before any engine runs: the summary of its active branch with the
 * list of every branch, the active branch's trajectory, readouts and findings. The page reads it
 * on notebook open; the numbers come from the ledger, nothing is measured again (the derived
 * readouts — layer balance, generalization, the sharpness verdict — are recomputed from the
 * stored records and trace, which is arithmetic on stored numbers, not a measurement).
 */
import type { StepRecord } from '../core/state';
import { decodeBranches, decodeFindings, validateLedger, type Ledger } from '../ledger';
import { cellFileNames, describePatch, patchChainExperiment, type SpecPatch } from '../experiment/patch';
import type { BranchInfo, BranchReadouts, SessionSummary } from './protocol';
import { describeRecipe, describeSetup } from './describe';
import { DISPLAY_RECORDS, sampleRecords } from './sampling';
import { findingsOf, readoutsFromLedger } from './readouts-data';
import { derivedReadouts } from './diagnosis';

/** A stored ledger as the cell shows it. */
export interface LedgerView {
  specText: string;
  summary: SessionSummary;
  /** An even sample of the active branch's trajectory. */
  trajectory: StepRecord[];
  /** The active branch's readouts, its findings among them. */
  readouts: BranchReadouts;
  /** The files the spec and its branches name (what an engine resuming it must read first). */
  files: string[];
}

/** Outcome of {@link viewLedger}. */
export type LedgerViewResult = { ok: true; view: LedgerView } | { ok: false; message: string; specText?: string };

/** Validates, decodes and describes a stored ledger; never throws. */
export function viewLedger(value: unknown): LedgerViewResult {
  const checked = validateLedger(value);
  if (!checked.ok) {
    const shown = checked.errors.slice(0, 3).join('; ') + (checked.errors.length > 3 ? ` (and ${checked.errors.length - 3} more)` : '');
    const spec = (value as { spec?: unknown } | null)?.spec;
    return { ok: false, message: shown, specText: typeof spec === 'string' ? spec : undefined };
  }
  try {
    return { ok: true, view: describeLedger(checked.ledger) };
  } catch (error) {
    return { ok: false, message: (error as Error).message, specText: checked.ledger.spec };
  }
}

/** The view of a validated ledger. @throws when a branch's patched spec no longer parses. */
export function describeLedger(ledger: Ledger): LedgerView {
  const decoded = decodeBranches(ledger);
  const chains = new Map<string, SpecPatch[]>();
  const branches: BranchInfo[] = decoded.map(b => {
    const chain = b.parent ? [...(chains.get(b.parent.branch) ?? []), b.patch as SpecPatch] : [];
    chains.set(b.name, chain);
    // Files are read when an engine starts; a description needs none of their numbers.
    const parsed = patchChainExperiment(ledger.spec, chain, { deferFiles: true });
    if (!parsed.ok) throw new Error(b.parent ? `branch '${b.name}' no longer validates against the spec (${parsed.errors[0].message})` : `the saved spec no longer parses (${parsed.errors[0].message})`);
    const atCursor = [...b.checkpoints, b.head].find(c => c.step === b.cursor);
    const record = b.trajectory.find(r => r.step === b.cursor);
    return {
      name: b.name,
      parent: b.parent?.branch ?? null,
      forkStep: b.parent?.step ?? null,
      patch: { ...b.patch },
      patchText: b.parent ? describePatch(b.patch as SpecPatch) : '',
      restart: b.restart,
      step: b.cursor,
      tip: b.head.step,
      loss: record?.loss ?? NaN,
      fingerprint: atCursor?.fingerprint ?? '',
      recipe: describeRecipe(parsed.experiment.recipe)
    };
  });
  const active = decoded.find(b => b.name === ledger.activeBranch) ?? decoded[0];
  const info = branches.find(b => b.name === active.name) as BranchInfo;
  const root = patchChainExperiment(ledger.spec, chains.get(active.name) ?? [], { deferFiles: true });
  if (!root.ok) throw new Error(`the saved spec no longer parses (${root.errors[0].message})`);
  const checkpointSteps = [...active.checkpoints.map(c => c.step), active.head.step];
  const readouts = readoutsFromLedger(active.readouts, findingsOf(decodeFindings(ledger.findings), active.name));
  const toCursor = active.trajectory.filter(r => r.step <= active.cursor);
  const children = decoded.filter(b => b.parent?.branch === active.name).map(b => ({ name: b.name, step: b.parent?.step ?? 0, patch: b.patch }));
  readouts.derived = derivedReadouts(toCursor, readouts.sharpness, root.experiment, readouts.findings, children);
  return {
    specText: ledger.spec,
    summary: {
      branch: active.name,
      step: active.cursor,
      tip: active.head.step,
      branches,
      fingerprint: info.fingerprint,
      parameterCount: ledger.parameterCount,
      checkpointSteps,
      recipe: info.recipe,
      setup: describeSetup(root.experiment.setup)
    },
    trajectory: sampleRecords(active.trajectory, DISPLAY_RECORDS),
    readouts,
    files: cellFileNames(ledger.spec, [...chains.values()].filter(c => c.length > 0))
  };
}
