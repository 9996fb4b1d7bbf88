/**
 * The one file that maps the engine host's {@link EngineCore} onto the real modules:
 * `spec/` for parsing, `core/probe` for the gradient audit and the curvature readouts.
 */
import type { SpecLimits } from '../experiment/limits';
import { Rng } from '../core/rng';
import { auditGradient } from '../core/probe/gradcheck';
import { aboveLimit, measureSessionCurvature, measureSessionCurvatureWith, type CurvatureReport, type DensityTraceRunner } from '../core/probe/curvature';
import { gradientNoiseScale } from '../core/probe/noise-scale';
import { effectiveBatch, type Session } from '../core/session';
import { parseSpec } from '../experiment';
import { patchChainExperiment } from '../experiment/patch';
import type { CellFiles, EngineCore, ParseOutcome } from './engine-core';
import type { Experiment } from '../core/setup';
import type { CurvatureResult, SharpnessPoint } from './protocol';
import { curvatureVerdict } from './diagnosis';

/** The curvature reply's shape from a report. */
function curvatureResult(session: Session, { spectrum, summary, threads, fused, partial }: CurvatureReport): CurvatureResult {
  return {
    ...(threads === undefined ? {} : { threads }),
    ...(fused === true ? { fused } : {}),
    ...(partial === true ? { partial } : {}),
    step: session.stepCount,
    method: spectrum.method,
    parameterCount: spectrum.parameterCount,
    top: [...spectrum.top],
    topBounds: [...spectrum.topBounds],
    bottom: [...spectrum.bottom],
    bottomBounds: [...spectrum.bottomBounds],
    products: spectrum.products,
    stop: spectrum.stop,
    summary,
    ...curvatureVerdict(summary, spectrum)
  };
}

/** The core option that hands the early top-end readout on as a {@link CurvatureResult}. */
function topEnd(session: Session, onTopEnd: ((partial: CurvatureResult) => void) | undefined): { onTopEnd?: (r: CurvatureReport) => void } {
  return onTopEnd === undefined ? {} : { onTopEnd: (r) => onTopEnd(curvatureResult(session, r)) };
}

/**
 * The real numerics; with `helper`, the curvature readout's density and trace run there (a
 * second thread) while Lanczos runs in the engine's own.
 */
export function coreWith(helper?: (experiment: Experiment) => DensityTraceRunner): EngineCore {
  return {
    ...realCore,
    curvature(experiment, session, k, denseLimit, onTopEnd, control) {
      if (helper === undefined) return realCore.curvature(experiment, session, k, denseLimit, onTopEnd, control);
      const rng = Rng.fromSeed(experiment.seed).fork(`curvature-${session.stepCount}`);
      return measureSessionCurvatureWith(helper(experiment), session, rng, { k, denseLimit, ...topEnd(session, onTopEnd), ...control }).then(r => curvatureResult(session, r));
    }
  };
}

/** The real numerics behind the engine host, in one thread. */
export const realCore: EngineCore = {
  parse(specText: string, files?: CellFiles, limits?: SpecLimits): ParseOutcome {
    return parseSpec(specText, 'auto', { ...(files === undefined ? {} : { files: files.files, fileProblems: files.problems }), ...(limits === undefined ? {} : { limits }) });
  },
  parsePatched(specText, patches, files, limits): ParseOutcome {
    return patchChainExperiment(specText, patches, { ...(files === undefined ? {} : { files: files.files, fileProblems: files.problems }), ...(limits === undefined ? {} : { limits }) });
  },
  audit(experiment, session, sample) {
    // The subset is drawn from the seed and the step, so an audit is itself reproducible.
    const rng = Rng.fromSeed(experiment.seed).fork(`audit-${session.stepCount}`);
    return auditGradient(session.objective, session.parameters, { sample, rng });
  },
  curvature(experiment, session, k, denseLimit, onTopEnd, control): CurvatureResult {
    // One thread, synchronous: a stop request cannot arrive until it returns (no `pause` turns).
    const rng = Rng.fromSeed(experiment.seed).fork(`curvature-${session.stepCount}`);
    return curvatureResult(session, measureSessionCurvature(session, rng, { k, denseLimit, ...topEnd(session, onTopEnd), ...(control === undefined ? {} : { shouldStop: control.shouldStop }) }));
  },
  noise(experiment, session, sample) {
    // Like the audit: the rows sampled come from the seed and the step.
    const rng = Rng.fromSeed(experiment.seed).fork(`noise-${session.stepCount}`);
    const rows = session.objective.rowCount;
    const batch = effectiveBatch(experiment.recipe, rows) || rows;
    return gradientNoiseScale(session.objective, Float64Array.from(session.parameters), rng, { sample, batch, step: session.stepCount });
  },
  sharpness(experiment, session): SharpnessPoint {
    const rng = Rng.fromSeed(experiment.seed).fork(`sharpness-${session.stepCount}`);
    const { summary } = measureSessionCurvature(session, rng, { method: 'lanczos', k: 1, density: false, traceProbes: 0, maxIterations: 80 });
    const st = summary.stability;
    return {
      step: session.stepCount,
      lambdaMax: summary.lambdaMax,
      sharpness: st.sharpness,
      limit: st.sharpnessLimit,
      preconditioned: st.preconditioned,
      above: aboveLimit(st.sharpness, st.sharpnessLimit),
      lr: st.lr
    };
  }
};
