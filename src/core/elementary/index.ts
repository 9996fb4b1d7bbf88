/**
 * Engine-independent elementary functions: the same bits in V8, SpiderMonkey, QuickJS and
 * every other conforming JavaScript engine, because they use only IEEE-754 arithmetic
 * (+, −, ×, ÷, √), which every engine rounds identically. Core code on the stepping path
 * (trajectories, initialization, fingerprints) calls these instead of `Math.exp`, `Math.log`,
 * …; `eslint.config.mjs` forbids the engine's versions in `src/core/`.
 */
export { exp, expm1 } from './exp';
export { log, log1p } from './log';
export { cos, erf, pow, sin } from './fdlibm';
export { sigmoid, softplus, tanh } from './sigmoidal';
