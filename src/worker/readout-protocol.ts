/** Messages between the engine worker and its readout helper (`readout.worker.ts`). */
import type { Setup } from '../core/setup';
import type { DensityTrace, DensityTraceTask } from '../core/probe/curvature';

/** Compute a density and a trace for `task` on the objective of `setup`. */
export interface ReadoutRequest {
  id: number;
  setup: Setup;
  task: DensityTraceTask;
}

/** The helper's answer to one request. */
export type ReadoutReply = { id: number; ok: true; result: DensityTrace } | { id: number; ok: false; message: string };
