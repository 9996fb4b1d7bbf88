/**
 * Dense and matrix-free symmetric eigen-solvers over `Float64Array`s (Golub & Van Loan,
 * *Matrix Computations*, 4th ed., ch. 8 and 10), stochastic Lanczos quadrature and
 * Hutchinson's trace estimator. Pure numerics: no DOM, no JupyterLab.
 */
export { eigenvalues } from './symmetric-eigen';
export { spectralDensity } from './density';
