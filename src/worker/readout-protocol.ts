/** Messages between the engine worker and its readout helper (`readout.worker.ts`). */
import type { Setup } from '../core/setup';
import type { DensityTrace, DensityTraceTask, StepMetricValue } from '../core/probe/curvature';

/** Compute the step metric's sharpness, a density and a trace for `task` on the objective of `setup`. */
export interface ReadoutRequest {
  id: number;
  setup: Setup;
  task: DensityTraceTask;
}

/**
 * The helper's answers to one request: `accepted` as soon as it holds the request (the engine
 * waits for it before it starts Lanczos), `step-metric` as soon as it has the step metric's
 * sharpness (when the task asks for it; the early top-end readout waits for it), then the
 * result or the error.
 */
export type ReadoutReply =
  | { id: number; kind: 'accepted' }
  | { id: number; kind: 'step-metric'; value: StepMetricValue | null }
  | { id: number; kind: 'done'; ok: true; result: DensityTrace }
  | { id: number; kind: 'done'; ok: false; message: string };
