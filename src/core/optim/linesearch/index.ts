/** One-dimensional line searches: bracketing, golden section, Brent, strong Wolfe. */
export * from './types';
export { bracketMinimum, type BracketOptions } from './bracket';
export { goldenSection, type GoldenOptions } from './golden';
export { brentMinimize, type BrentOptions } from './brent';
export { strongWolfe, cubicMinimizer, type WolfeOptions, type WolfeResult } from './wolfe';
export { minimizeAlong, lineFunction, lineFunctionWithSlope, type AlongOptions } from './along';
