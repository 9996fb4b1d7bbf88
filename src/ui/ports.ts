/**
 * What the cell controller needs from the world around it, as interfaces: the notebook
 * cell (implemented in `plugin/` over JupyterLab's cell model), the ledger layer (one
 * adapter file, `ledger-glue.ts`) and the settings. Keeping these narrow lets the
 * controller run under Node in unit tests with the real engine host in-process.
 */
import type { SpecProblem } from '../worker/protocol';
import type { LedgerProblem } from '../ledger';
import { DEFAULT_SPEC_LIMITS, type SpecLimits } from '../experiment/limits';
import type { LedgerView } from '../worker/ledger-view';
import type { CellSummary } from './summary';

/** The notebook cell a controller works on. */
export interface CellHost {
  /** The cell's current source text (the spec). */
  readSource(): string;
  /** The raw value under our metadata key, or undefined. */
  readLedger(): unknown;
  /** Replaces the value under our metadata key with a complete, validated ledger. */
  writeLedger(value: object): void;
  /**
   * Replaces the cell's outputs with our bundle: the live-widget mime type plus a markdown
   * fallback. `summary` is null when no session exists yet (spec errors).
   */
  writeOutputs(summary: CellSummary | null, markdown: string): void;
  /**
   * Reads the files the spec names (data, weights), relative to the notebook's folder, each
   * refused before it is fetched when larger than the readers' limit. Absent: this host reads no
   * files (a spec that names one then gets an error at that key saying so).
   */
  readFiles?(names: readonly string[]): Promise<FilesRead>;
  /**
   * Marks the notebook as changed (dirty) without writing anything: a long run has produced steps
   * that are not saved yet, so a reload or close asks first. Optional.
   */
  markDirty?(): void;
  /** True when the cell already carries Stepwell's output (absent: assume it does). */
  hasOutput?(): boolean;
  /**
   * Moves a value (an unreadable ledger) under another metadata key of this cell so it is kept
   * beside the new ledger; returns the key. Absent: keeping a copy is not offered.
   */
  keepAside?(value: unknown): string;
  /** The cell's id in the notebook (nbformat 4.5), or null when it has none. */
  cellId(): string | null;
  /** Index of this cell's decision record in the notebook (a cell whose metadata names this cell), or null. */
  findRecord(): number | null;
  /**
   * Writes the decision record: replaces this cell's existing record in place, or inserts a new
   * markdown cell directly below this one. Never changes any other cell.
   */
  writeRecord(record: RecordCell): void;
}

/** Files read for a cell: bytes by the name as the spec writes it, and why any name was not read. */
export interface FilesRead {
  files: Map<string, Uint8Array>;
  problems: Map<string, string>;
}

/** A decision record as a markdown cell: source, attachments (name → mime → base64) and metadata. */
export interface RecordCell {
  source: string;
  attachments: Record<string, Record<string, string>>;
  metadata: Record<string, unknown>;
}

/** What a ledger holds, as the controller sees it (see `worker/ledger-view.ts`). */
export interface LedgerContent extends LedgerView {
  /** The stored value itself: what an engine resumes every branch from. */
  raw: object;
}

/** Outcome of reading the metadata value. */
export type LedgerRead =
  | { kind: 'absent' }
  | { kind: 'ok'; content: LedgerContent }
  /** `specText` when the spec could still be recovered from the broken value. */
  | { kind: 'corrupt'; message: string; specText?: string; problems?: LedgerProblem[] };

/**
 * The ledger layer as the controller uses it on the page: reading only. Ledgers are built
 * in the worker (`worker/cell-grove.ts`), which holds every branch.
 */
export interface LedgerGlue {
  /**
   * Validates and decodes a metadata value; never throws (a promise never rejects). In the
   * browser the work runs in a worker and a promise comes back; in Node tests it may be direct.
   * A value whose JSON text takes more than `maxBytes` (the `maxLedgerBytes` setting; absent: no
   * limit) is refused as unreadable before it is copied or parsed.
   */
  read(value: unknown, limits?: SpecLimits, maxBytes?: number): LedgerRead | Promise<LedgerRead>;
}

/** User settings the controller reads at each action (schema/plugin.json). */
export interface CellSettings {
  /** Steps of "Step ×N". Default 10. */
  defaultN: number;
  /** Auto-checkpoint interval in steps. Default 25. */
  checkpointEvery: number;
  /** Most checkpoints kept in the ledger. Default 20. */
  checkpointCap: number;
  /** Entries sampled by the gradient audit. Default 200. */
  auditSample: number;
  /** Rows whose gradients the gradient noise scale takes. Default 64. */
  noiseSample: number;
  /** Largest parameter count for a dense Hessian. Default 2000. */
  denseHessianLimit: number;
  /** Eigenvalues computed by the curvature readout. Default 10. */
  eigenCount: number;
  /** Most numbers one array taken from the kernel may hold. Default 20000. */
  kernelDataLimit: number;
  /** Size limits of a spec, checked before allocation (defaults: `DEFAULT_SPEC_LIMITS`). */
  limits: SpecLimits;
  /** Most bytes a cell's ledger may take; a larger one is not written. Default 50 000 000. */
  maxLedgerBytes: number;
}

/**
 * Default largest ledger: 50 MB, where GitHub starts warning about a file it hosts (it refuses
 * files above 100 MB). // from memory: GitHub's documented file-size limits
 */
export const DEFAULT_MAX_LEDGER_BYTES = 50_000_000;

/** Defaults of {@link CellSettings} (the same as schema/plugin.json). */
export const DEFAULT_SETTINGS: CellSettings = {
  defaultN: 10,
  checkpointEvery: 25,
  checkpointCap: 20,
  auditSample: 200,
  noiseSample: 64,
  denseHessianLimit: 2000,
  eigenCount: 10,
  kernelDataLimit: 20000,
  limits: { ...DEFAULT_SPEC_LIMITS },
  maxLedgerBytes: DEFAULT_MAX_LEDGER_BYTES
};

/** Checks the editor's text live; returns its errors (empty when it parses). */
export type SpecChecker = (text: string) => SpecProblem[];
