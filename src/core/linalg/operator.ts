/**
 * Shared vocabulary of the matrix-free solvers: a symmetric linear operator given as a
 * product callback, and the progress / cancellation hooks that the UI's progress bar uses.
 */

/** out ← A·v for a symmetric operator A of order n (v is never modified; out is caller-owned). */
export type LinearOperator = (v: Float64Array, out: Float64Array) => void;

/** outs[j] ← A·vs[j] for each j: the products of a {@link LinearOperator}, several in one call. */
export type BlockOperator = (vs: readonly Float64Array[], outs: readonly Float64Array[]) => void;

/** An operator's block products and how many vectors one call should carry. */
export interface BlockProducts {
  readonly apply: BlockOperator;
  readonly size: number;
}

/** One progress report, sent after every operator product round (one Lanczos step, one probe). */
export interface Progress {
  /** What is running: `lanczos`, `density`, `trace`, `dense-hessian`, `layers`, `trajectory`, … */
  readonly phase: string;
  /** Work units done so far in this phase (iterations, probes, columns, …). */
  readonly done: number;
  /** Upper bound of `done` (the run may stop earlier once converged). */
  readonly total: number;
  /** Operator products spent so far. */
  readonly products: number;
  /** Free-form detail for the progress line, e.g. `3 of 5 converged`. */
  readonly detail?: string;
}

/** Progress and cancellation hooks; both optional. */
export interface IterationControl {
  /** Called after every step; returning `false` cancels the run (partial results are returned). */
  onProgress?: (progress: Progress) => boolean | void;
  /** Polled before every operator product; returning `true` cancels the run (AbortSignal-like). */
  shouldStop?: () => boolean;
}

/** Why an iterative run ended. */
export type StopReason = 'converged' | 'max-iterations' | 'cancelled' | 'exhausted';

/** True when the caller asked to stop (via `shouldStop`). */
export function stopRequested(control: IterationControl | undefined): boolean {
  return control?.shouldStop !== undefined && control.shouldStop();
}

/** Sends one progress report; true when the caller asked to stop (callback returned `false`). */
export function reportProgress(control: IterationControl | undefined, progress: Progress): boolean {
  if (control?.onProgress === undefined) return false;
  return control.onProgress(progress) === false;
}

/** Scales `x` to unit Euclidean norm in place and returns the norm it had. */
export function normalizeInPlace(x: Float64Array): number {
  let s = 0;
  for (let i = 0; i < x.length; i++) s += x[i] * x[i];
  const r = Math.sqrt(s);
  if (r > 0) for (let i = 0; i < x.length; i++) x[i] /= r;
  return r;
}
