/**
 * Curvature readouts: dense and matrix-free spectra of the Hessian or Gauss-Newton matrix, derived
 * numbers (λmax, λmin, condition number, negative share, trace, largest stable learning rate),
 * per-layer block sharpness, sharpness along a trajectory, and the loss along a direction.
 */
export { curvatureOperator } from './operator';
export { denseSpectrum } from './dense';
export { stabilityFactor, stabilityBound, preconditionerDiagonal, stepMetric } from './stability';
export type { CurvatureSummary, CurvatureReport } from './summary';
export { measureCurvature, measureCurvatureWith } from './summary';
export type { DensityTraceTask, DensityTrace, DensityTraceJob, DensityTraceRunner, StepMetricValue } from './parts';
export { runDensityTrace } from './parts';
export { layerSharpness } from './layers';
export { trackSharpness } from './trajectory';
export { lineProfile } from './profile';
export { measureSessionCurvature, measureSessionCurvatureWith } from './measure-session';
export type { StabilityVerdict, TraceVerdict } from './verdicts';
export { aboveLimit, eigenvaluesAbove, eigenvalueLimit, stabilitySentence, stabilityVerdict, traceSentence, traceVerdict } from './verdicts';
