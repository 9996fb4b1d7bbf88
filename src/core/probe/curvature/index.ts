/**
 * Curvature readouts: dense and matrix-free spectra of the Hessian or Gauss-Newton matrix, derived
 * numbers (λmax, λmin, condition number, negative share, trace, largest stable learning rate),
 * per-layer block sharpness, sharpness along a trajectory, and the loss along a direction.
 */
export type { CurvatureKind, CurvatureOperatorOptions, CountingOperator } from './operator';
export { curvatureOperator } from './operator';
export type { DenseHessian, DenseHessianOptions, DenseSpectrum } from './dense';
export { DENSE_LIMIT, denseHessian, denseSpectrum } from './dense';
export type { StabilityRule, StabilityFactor, StabilityBound, StepMetric } from './stability';
export { stabilityFactor, stabilityBound, preconditionerDiagonal, stepMetric } from './stability';
export type { CurvatureSpectrum, CurvatureSummary, SummaryOptions, MeasureOptions, CurvatureReport } from './summary';
export { DEFAULT_CUTOFF, CURVATURE_CAVEAT, CANCELLED, spectrumFromDense, spectrumFromLanczos, curvatureSummary, measureCurvature, measureCurvatureWith } from './summary';
export type { DensityTraceTask, DensityTrace, DensityTraceRunner } from './parts';
export { densityTraceTask, runDensityTrace } from './parts';
export type { LayerSharpness, LayerSharpnessOptions } from './layers';
export { layerSharpness } from './layers';
export type { SteppableSession, SharpnessRecord, TrackOptions, SharpnessTrace } from './trajectory';
export { trackSharpness } from './trajectory';
export type { LineProfile, LineProfileOptions } from './profile';
export { lineProfile } from './profile';
export type { CurvatureSession } from './measure-session';
export { measureSessionCurvature, measureSessionCurvatureWith } from './measure-session';
export type { StabilityVerdict, TracePoint, TraceVerdict } from './verdicts';
export { stabilitySentence, stabilityVerdict, traceSentence, traceVerdict } from './verdicts';
