/**
 * Dense and matrix-free symmetric eigen-solvers over `Float64Array`s (Golub & Van Loan,
 * *Matrix Computations*, 4th ed., ch. 8 and 10), stochastic Lanczos quadrature and
 * Hutchinson's trace estimator. Pure numerics: no DOM, no JupyterLab.
 */
export type { Tridiagonal, HouseholderReduction } from './householder';
export type { TridiagonalizeOptions } from './householder';
export { tridiagonalize, applyReflectors } from './householder';
export type { TridiagonalEigen } from './tridiagonal';
export { tridiagonalQL, tridiagonalEigen, gershgorinBounds, sturmCount, bisectEigenvalues, tridiagonalInverseIteration } from './tridiagonal';
export type { SymmetricEigenOptions, SymmetricEigenResult } from './symmetric-eigen';
export { symmetricEigen, eigenvalues, selectedEigenpairs, fromRows } from './symmetric-eigen';
export type { LinearOperator, Progress, IterationControl, StopReason } from './operator';
export type { KrylovState, LanczosOptions, RitzPair, LanczosResult } from './lanczos';
export { startKrylov, lanczosStep, lanczosExtremes } from './lanczos';
export type { DensityOptions, SpectralDensity, TraceOptions, TraceEstimate } from './density';
export { spectralDensity, densityMassBelow, hutchinsonTrace } from './density';
