/** One-dimensional line searches: bracketing, golden section, Brent, strong Wolfe. */
export * from './types';
export { bracketMinimum } from './bracket';
export { goldenSection } from './golden';
export { brentMinimize } from './brent';
export { strongWolfe } from './wolfe';
export { minimizeAlong } from './along';
