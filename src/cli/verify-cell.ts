/**
 * Verifying one stepwell cell of a notebook: what `stepwell verify` prints per cell and what
 * `stepwell report` shows. The ledger is read through the ledger layer's one door (migration,
 * validation), the cell's spec and the files it names are read relative to the notebook, the
 * branches are rebuilt as core's {@link Grove} (`groveFromLedger`, as the cell's worker does) and
 * each branch is replayed from spec and seed by `Grove.replay`, which compares every stored
 * record bit for bit, the fingerprint at every stored checkpoint, and the tip.
 *
 * Besides the replays it states what changed since the ledger was written: the spec text (its
 * SHA-256 against `specHash`, with the lines that differ), the data (the hash of the numbers read
 * from the files now against `dataHash`), the bytes of every file each branch read (SHA-256 now
 * against the branch's `files`, at the key that names it), the engine (`engine`), and edits the
 * ledger's own digests and fingerprints reveal.
 */
import { ENGINE_NAME } from '../core/engine';
import { sha256Hex as sha256OfBytes } from '../core/data';
import type { Experiment } from '../core/setup';
import type { ReplayDifference } from '../core/session';
import { formatSpecError, readSpecValue, specFileRefs } from '../experiment';
import { formatPath } from '../experiment/path';
import { applyPatches, patchChainExperiment, type SpecPatch } from '../experiment/patch';
import { buildObjective } from '../core/assemble';
import { groveFromLedger, sha256Hex, validateLedger, type Ledger, type RestoredGrove } from '../ledger';
import { ledgerChains, readCellFiles, type CellFile } from './cell-files';
import { cellLabel, type NotebookCell } from './notebook';
import { specChanges, type LineChange } from './spec-diff';

/** Verdict of one branch, one cell or a whole notebook (worst first: unreadable, differs, within-tolerance). */
export type Verdict = 'bit-identical' | 'within-tolerance' | 'differs' | 'unreadable';

/** One branch's replay, as `verify --json` prints it. */
export interface BranchCheck {
  name: string;
  parent: string | null;
  forkStep: number | null;
  /** Flat spec keys the branch changed against its parent. */
  patch: Record<string, unknown>;
  /** The branch's tip (the furthest step it reached) — what was replayed to. */
  steps: number;
  /** Stored step records compared (the parent's shared ones included). */
  records: number;
  /** Steps whose state fingerprints were compared (stored checkpoints and the tip). */
  checkpoints: number[];
  match: Exclude<Verdict, 'unreadable'>;
  firstDifferingStep?: number;
  firstDifference?: ReplayDifference;
  /** Largest ‖Δw‖∞/‖w‖∞ over the compared parameter vectors, and the tolerance for "within tolerance". */
  maxRelDiff: number;
  tolerance: number;
  recordedFingerprint: string;
  replayedFingerprint: string;
}

/** One cell's verification. */
export interface CellCheck {
  index: number;
  id: string | null;
  verdict: Verdict;
  engine: { recorded: string | null; current: string; changed: boolean };
  spec: { recordedHash: string | null; currentHash: string; changed: boolean; replayed: 'cell' | 'ledger'; lines: LineChange[]; errors: string[] };
  /** Files the spec names (absent for inline data); the data hashes when either side has one. */
  data: { recordedHash: string | null; currentHash: string | null; changed: boolean; files: (CellFile & { sha256: string })[] };
  /**
   * Every file a branch's ledger entry records (`files`: what the branch read), against the file
   * at that name now: `current` is the SHA-256 of its bytes now (null when it cannot be read);
   * `keys` are the spec keys that name it for that branch (`data.file`, `model.weights.file`, …).
   */
  branchFiles: BranchFileCheck[];
  /** Edits or damage the ledger's own checks found (digests, fingerprints, specHash); the replay still ran. */
  integrity: string[];
  /** Why the cell (or part of it) could not be checked. */
  problems: string[];
  branches: BranchCheck[];
}

/** One recorded file of one branch, checked against the file now (see `CellCheck.branchFiles`). */
export interface BranchFileCheck {
  branch: string;
  name: string;
  keys: string[];
  recorded: string;
  current: string | null;
  changed: boolean;
}

/**
 * The recorded files of every branch against the bytes read now. Keys come from the branch's
 * spec (the cell's text patched by the branch's lineage), so a file a branch's patch names is
 * reported at that key.
 */
function checkBranchFiles(ledger: Ledger, specText: string, now: ReadonlyMap<string, Uint8Array>): BranchFileCheck[] {
  const read = readSpecValue(specText);
  const chains = new Map<string, SpecPatch[]>();
  const out: BranchFileCheck[] = [];
  for (const b of ledger.branches) {
    const chain = b.parent ? [...(chains.get(b.parent.branch) ?? []), (b.patch ?? {}) as SpecPatch] : [];
    chains.set(b.name, chain);
    if (b.files === undefined) continue;
    const applied = read.ok ? applyPatches(read.value, chain) : undefined;
    const refs = applied !== undefined && applied.ok ? specFileRefs(applied.value) : [];
    for (const f of b.files) {
      const bytes = now.get(f.name);
      const current = bytes === undefined ? null : sha256OfBytes(bytes);
      const keys = refs.filter((r) => r.name === f.name).map((r) => formatPath(r.path));
      out.push({ branch: b.name, name: f.name, keys, recorded: f.sha256, current, changed: current !== f.sha256 });
    }
  }
  return out;
}

/** A cell's check with what the report draws from (the ledger and the rebuilt grove). */
export interface CellWork {
  check: CellCheck;
  ledger: Ledger | null;
  restored: RestoredGrove | null;
  /** The spec text the replay used (the cell's, unless it does not parse). */
  specText: string;
}

/** Options of {@link verifyCell}. */
export interface VerifyOptions {
  /** Most updates the replays of one cell may take (checked before any runs). */
  maxUpdates: number;
}

const worst: Verdict[] = ['unreadable', 'differs', 'within-tolerance', 'bit-identical'];

/** The worse of verdicts (unreadable, then differs, then within tolerance). */
export function worstVerdict(list: readonly Verdict[]): Verdict {
  return worst.find((v) => list.includes(v)) ?? 'bit-identical';
}

/** A ledger read strictly, else leniently (digests, fingerprints and specHash unchecked) with the strict errors kept. */
function readLedger(raw: unknown): { ledger: Ledger; integrity: string[] } | { errors: string[] } {
  const strict = validateLedger(raw);
  if (strict.ok) return { ledger: strict.ledger, integrity: [] };
  const lenient = validateLedger(raw, { verifyFingerprints: false, verifyDigests: false, verifySpecHash: false });
  return lenient.ok ? { ledger: lenient.ledger, integrity: strict.errors } : { errors: strict.errors };
}

/** Updates the replays of every branch take: each replays its lineage from step 0 to its tip. */
function replayCost(r: RestoredGrove): number {
  let total = 0;
  for (const b of r.branches) total += b.head.step;
  return total;
}

/**
 * Verifies one cell with a ledger (see the module comment). Never throws for a bad notebook:
 * whatever cannot be read or replayed is a problem of the cell, whose verdict is then `unreadable`.
 */
export function verifyCell(notebookPath: string, cell: NotebookCell, options: VerifyOptions): CellWork {
  const where = cellLabel(cell);
  const check: CellCheck = {
    index: cell.index,
    id: cell.id,
    verdict: 'unreadable',
    engine: { recorded: null, current: ENGINE_NAME, changed: false },
    spec: { recordedHash: null, currentHash: sha256Hex(cell.source), changed: false, replayed: 'cell', lines: [], errors: [] },
    data: { recordedHash: null, currentHash: null, changed: false, files: [] },
    branchFiles: [],
    integrity: [],
    problems: [],
    branches: []
  };
  const work: CellWork = { check, ledger: null, restored: null, specText: cell.source };
  const read = readLedger(cell.ledger);
  if ('errors' in read) {
    check.problems.push(...read.errors.slice(0, 8).map((e) => `${where}: the ledger cannot be read: ${e}`));
    return work;
  }
  const ledger = read.ledger;
  work.ledger = ledger;
  check.integrity = read.integrity.map((e) => `${where}: ${e}`);
  check.engine = { recorded: ledger.engine, current: ENGINE_NAME, changed: ledger.engine !== ENGINE_NAME };
  check.spec.recordedHash = ledger.specHash;
  check.spec.changed = check.spec.currentHash !== ledger.specHash;
  if (check.spec.changed) check.spec.lines = specChanges(ledger.spec, cell.source);

  // The cell's text is what a colleague runs; when it no longer parses, the ledger's own text is replayed.
  const chains = ledgerChains(ledger);
  let specText = cell.source;
  let files = readCellFiles(notebookPath, where, specText, chains);
  let rootParse = patchChainExperiment(specText, [], { files: files.files });
  if (!rootParse.ok && specText !== ledger.spec && files.problems.length === 0) {
    check.spec.errors = rootParse.errors.map(formatSpecError);
    specText = ledger.spec;
    check.spec.replayed = 'ledger';
    files = readCellFiles(notebookPath, where, specText, chains);
    rootParse = patchChainExperiment(specText, [], { files: files.files });
  }
  check.problems.push(...files.problems);
  work.specText = specText;
  check.branchFiles = checkBranchFiles(ledger, specText, files.files);
  if (!rootParse.ok) {
    if (files.problems.length === 0) check.problems.push(...rootParse.errors.map((e) => `${where}: the spec: ${formatSpecError(e)}`));
    return work;
  }
  const origin = rootParse.experiment.setup.data?.origin;
  check.data = {
    recordedHash: ledger.dataHash ?? null,
    currentHash: origin?.hash ?? null,
    changed: (ledger.dataHash ?? null) !== (origin?.hash ?? null),
    files: [...(origin?.files ?? []), ...(rootParse.experiment.setup.model.kind === 'network' && rootParse.experiment.setup.model.weightsOrigin ? [rootParse.experiment.setup.model.weightsOrigin] : [])].map((f) => {
      const found = files.found.find((x) => x.name === f.name);
      return { name: f.name, path: found?.path ?? f.name, bytes: f.bytes, sha256: f.sha256 };
    })
  };

  let restored: RestoredGrove;
  try {
    restored = groveFromLedger(
      ledger,
      (b, chain) => {
        const parsed = patchChainExperiment(specText, chain, { files: files.files });
        if (!parsed.ok) throw new Error(`branch '${b.name}' no longer validates against the spec: ${parsed.errors.map(formatSpecError).join('; ')}`);
        return checkedSize(parsed.experiment, ledger, b.name);
      },
      10,
      {},
      { verifyDigests: false }
    );
  } catch (e) {
    check.problems.push(`${where}: the branches cannot be rebuilt: ${(e as Error).message}`);
    return work;
  }
  work.restored = restored;
  const cost = replayCost(restored);
  if (cost > options.maxUpdates) {
    check.problems.push(`${where}: replaying every branch takes ${cost} updates, more than --max-updates ${options.maxUpdates}; raise it to verify this cell`);
    return work;
  }
  for (const b of restored.branches) {
    try {
      const r = restored.grove.replay(b.name);
      check.branches.push({
        name: b.name,
        parent: b.parent?.branch ?? null,
        forkStep: b.parent?.step ?? null,
        patch: { ...b.patch },
        steps: b.head.step,
        records: b.trajectory.length,
        checkpoints: r.comparedSteps,
        match: r.match,
        ...(r.firstDifferingStep !== undefined ? { firstDifferingStep: r.firstDifferingStep } : {}),
        ...(r.firstDifference !== undefined ? { firstDifference: r.firstDifference } : {}),
        maxRelDiff: r.maxRelDiff,
        tolerance: r.tolerance,
        recordedFingerprint: r.recordedFingerprint,
        replayedFingerprint: r.replayedFingerprint
      });
    } catch (e) {
      check.problems.push(`${where}: branch '${b.name}' could not be replayed: ${(e as Error).message}`);
    }
  }
  const replayed = check.branches.map((b) => b.match);
  const changed = check.spec.changed || check.data.changed || check.branchFiles.some((f) => f.changed) || check.integrity.length > 0;
  check.verdict = check.problems.length > 0 ? 'unreadable' : changed ? worstVerdict([...replayed, 'differs']) : worstVerdict(replayed);
  return work;
}

/** The experiment, after checking that its parameter count is the ledger's (a changed model cannot restore the stored states). */
function checkedSize(e: Experiment, ledger: Ledger, branch: string): Experiment {
  const count = buildObjective(e.setup).parameterCount;
  if (count !== ledger.parameterCount) {
    throw new Error(`branch '${branch}': the spec's model has ${count} parameters, the ledger's states ${ledger.parameterCount} (the model was changed after the ledger was written)`);
  }
  return e;
}
