/**
 * What the cell controller needs from the world around it, as interfaces: the notebook
 * cell (implemented in `plugin/` over JupyterLab's cell model), the ledger layer (one
 * adapter file, `ledger-glue.ts`) and the settings. Keeping these narrow lets the
 * controller run under Node in unit tests with the real engine host in-process.
 */
import type { SessionState, StepRecord } from '../core/state';
import type { CheckpointData, SessionSummary, SpecProblem } from '../worker/protocol';
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
}

/** What a ledger holds, as the controller sees it. */
export interface LedgerContent {
  /** Spec text the session belongs to. */
  specText: string;
  summary: SessionSummary;
  /** State at the current step. */
  state: SessionState;
  /** Record 0 to the current step. */
  trajectory: StepRecord[];
  checkpoints: CheckpointData[];
}

/** Outcome of reading the metadata value. */
export type LedgerRead =
  | { kind: 'absent' }
  | { kind: 'ok'; content: LedgerContent }
  /** `specText` when the spec could still be recovered from the broken value. */
  | { kind: 'corrupt'; message: string; specText?: string };

/**
 * The ledger layer as the controller uses it on the page: reading only. Ledgers are built
 * in the worker (`worker/ledger-build.ts`), which holds the full session.
 */
export interface LedgerGlue {
  /** Validates and decodes a metadata value; never throws. */
  read(value: unknown): LedgerRead;
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
  /** Largest parameter count for a dense Hessian. Default 2000. */
  denseHessianLimit: number;
  /** Eigenvalues computed by the curvature readout. Default 10. */
  eigenCount: number;
  /** Most numbers one array taken from the kernel may hold. Default 20000. */
  kernelDataLimit: number;
}

/** Defaults of {@link CellSettings} (the same as schema/plugin.json). */
export const DEFAULT_SETTINGS: CellSettings = {
  defaultN: 10,
  checkpointEvery: 25,
  checkpointCap: 20,
  auditSample: 200,
  denseHessianLimit: 2000,
  eigenCount: 10,
  kernelDataLimit: 20000
};

/** Checks the editor's text live; returns its errors (empty when it parses). */
export type SpecChecker = (text: string) => SpecProblem[];
