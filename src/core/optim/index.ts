/** Optimizer families as (init, update) pairs, gradient transforms, schedules and line searches. */
export { familyFor } from './registry';
export { applyUpdates, descend, Workspace, type OptimizerContext, type OptimizerFamily } from './types';
export { sgd } from './sgd';
export { adagrad } from './adagrad';
export { rmsprop } from './rmsprop';
export { adam, adamw } from './adam';
export { lbfgs, lbfgsIteration, initLbfgs, resetLbfgs, type LbfgsStep } from './lbfgs';
export { cg } from './cg';
export { newton, gaussNewton, DENSE_LIMIT } from './newton';
export { minibatchLbfgs } from './minibatch-lbfgs';
export { learningRate, scheduleFactor, warmupFactor } from './schedule';
export { clipByGlobalNorm, addWeightDecay, layerScales } from './gradient';
export { withWeightDecay } from './decayed';
export { checkRecipe } from './recipe-check';
export { powInt } from './powers';
export * from './linesearch';
