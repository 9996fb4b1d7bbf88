/**
 * What a stored ledger shows before any engine runs: the summary of its active branch with the
 * list of every branch, the active branch's trajectory, readouts and findings. The page reads it
 * on notebook open; the numbers come from the ledger, nothing is measured again (the derived
 * readouts — layer balance, generalization, the sharpness verdict — are recomputed from the
 * stored records and trace, which is arithmetic on stored numbers, not a measurement).
 */
import type { StepRecord } from '../core/state';
import type { Experiment } from '../core/setup';
import { decodeFindings, openLedger, summarizeProblems, type DecodedBranch, type ExperimentMaker, type Ledger, type LedgerProblem } from '../ledger';
import type { SpecLimits } from '../experiment/limits';
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
  /** UTF-8 size of the stored value's JSON, measured where it was read. */
  bytes?: number;
}

/** Outcome of {@link viewLedger}: the view, or every problem located (field, branch, step) with the first few as `message`. */
export type LedgerViewResult = { ok: true; view: LedgerView } | { ok: false; message: string; problems: LedgerProblem[]; specText?: string };

/**
 * Makes a branch's experiment the way the engine does (`experiment/patch.ts`), under `limits`,
 * without reading the files its spec names (the page opens a ledger before any engine reads
 * them): such a branch is marked `withoutFiles`, and the checks that need the files' numbers wait
 * for the engine.
 */
export function branchExperiment(limits?: SpecLimits): ExperimentMaker {
  return (spec, chain) => {
    const parsed = patchChainExperiment(spec, chain as SpecPatch[], { deferFiles: true, ...(limits === undefined ? {} : { limits }) });
    if (!parsed.ok) return { ok: false, message: parsed.errors[0].message };
    return { ok: true, experiment: parsed.experiment, withoutFiles: cellFileNames(spec, [chain]).length > 0 };
  };
}

/**
 * Opens a stored ledger whole (`openLedger`: schema, decoding, fingerprints, and every branch
 * against the experiment its spec makes) and describes it; never throws.
 */
export function viewLedger(value: unknown, limits?: SpecLimits): LedgerViewResult {
  const opened = openLedger(value, branchExperiment(limits));
  if (!opened.ok) return { ok: false, message: summarizeProblems(opened.problems), problems: opened.problems, specText: opened.specText };
  try {
    return { ok: true, view: { ...describeLedger(opened.ledger, opened.branches, opened.experiments), bytes: new TextEncoder().encode(JSON.stringify(value)).length } };
  } catch (error) {
    const detail = (error as Error).message;
    return { ok: false, message: detail, problems: [{ field: 'ledger', detail, message: detail }], specText: opened.ledger.spec };
  }
}

/** The view of an opened ledger (its decoded branches and their experiments, ledger order). */
export function describeLedger(ledger: Ledger, decoded: readonly DecodedBranch[], experiments: readonly Experiment[]): LedgerView {
  const chains = new Map<string, SpecPatch[]>();
  const branches: BranchInfo[] = decoded.map((b, i) => {
    chains.set(b.name, b.parent ? [...(chains.get(b.parent.branch) ?? []), b.patch as SpecPatch] : []);
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
      recipe: describeRecipe(experiments[i].recipe)
    };
  });
  const active = decoded.find(b => b.name === ledger.activeBranch) ?? decoded[0];
  const info = branches.find(b => b.name === active.name) as BranchInfo;
  const activeExperiment = experiments[decoded.indexOf(active)];
  const checkpointSteps = [...active.checkpoints.map(c => c.step), active.head.step];
  const readouts = readoutsFromLedger(active.readouts, findingsOf(decodeFindings(ledger.findings), active.name));
  const toCursor = active.trajectory.filter(r => r.step <= active.cursor);
  const children = decoded.filter(b => b.parent?.branch === active.name).map(b => ({ name: b.name, step: b.parent?.step ?? 0, patch: b.patch }));
  readouts.derived = derivedReadouts(toCursor, readouts.sharpness, activeExperiment, readouts.findings, children);
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
      setup: describeSetup(activeExperiment.setup)
    },
    trajectory: sampleRecords(active.trajectory, DISPLAY_RECORDS),
    readouts,
    files: cellFileNames(ledger.spec, [...chains.values()].filter(c => c.length > 0))
  };
}
