/**
 * Every family's fresh state holds exactly what core/optim/layout.ts declares for it (with every
 * option that adds a buffer), a state of another family is refused by name, and a restored state
 * with an entry its recipe does not keep is refused (a ledger could carry one).
 */
import { initOptimizerState } from '../../../src/core/optim/chain';
import { stateOf, STATE_LAYOUTS, ADAM_STATE, LBFGS_STATE } from '../../../src/core/optim/layout';
import { Session } from '../../../src/core/session/live';
import type { OptimizerName, Recipe } from '../../../src/core/setup';
import { experiment, recipe } from './fixtures';

const P = 5;

/** Each family with the options that change its state. */
const CASES: [OptimizerName, Partial<Recipe>][] = [
  ['sgd', {}], ['sgd', { momentum: 0.9 }], ['sgd', { momentum: 0.9, nesterov: true }],
  ['adagrad', {}], ['adagrad', { initialAccumulator: 0.1 }],
  ['rmsprop', {}], ['rmsprop', { centered: true }], ['rmsprop', { momentum: 0.5 }], ['rmsprop', { centered: true, momentum: 0.5 }],
  ['adam', {}], ['adam', { amsgrad: true }], ['adamw', {}], ['adamw', { amsgrad: true }],
  ['lbfgs', {}], ['minibatch-lbfgs', {}], ['cg', {}], ['newton', {}], ['gauss-newton', {}],
  ['sgd', { schedule: { kind: 'plateau', factor: 0.5, patience: 2, threshold: 1e-4, thresholdMode: 'rel', cooldown: 0, floor: 0 } }]
];

describe('optimizer state layouts', () => {
  it('covers every family', () => expect(new Set(CASES.map(([k]) => k)).size).toBe(Object.keys(STATE_LAYOUTS).length));

  it.each(CASES)('%s %j: the fresh state holds the declared buffers (and only declared optional ones) and scalars', (optimizer, patch) => {
    const state = initOptimizerState(recipe({ optimizer, ...patch }), P);
    const layout = STATE_LAYOUTS[optimizer];
    const buffers = Object.keys(state.buffers);
    for (const b of layout.buffers) expect(buffers).toContain(b);
    for (const b of buffers) expect([...layout.buffers, ...layout.optional]).toContain(b);
    const own = Object.keys(state.scalars).filter((s) => !s.startsWith('plateau.'));
    expect(own.sort()).toEqual([...layout.scalars].sort());
    expect(stateOf(layout, state)).toBe(state);
  });

  it('refuses a state of another family, and one missing a declared entry, by name', () => {
    const sgd = initOptimizerState(recipe({ optimizer: 'sgd', momentum: 0.9 }), P);
    expect(() => stateOf(ADAM_STATE, sgd)).toThrow("optimizer state of kind 'sgd' handed to adam / adamw");
    const lbfgs = initOptimizerState(recipe({ optimizer: 'lbfgs' }), P);
    delete (lbfgs.scalars as Record<string, number>).hDiag;
    expect(() => stateOf(LBFGS_STATE, lbfgs)).toThrow("optimizer state of kind 'lbfgs' has no scalar 'hDiag'");
  });

  it('a restored state with a buffer or scalar its recipe does not keep is refused', () => {
    const ex = experiment({ optimizer: 'adam' });
    const s = Session.create(ex);
    s.step();
    const state = s.state();
    const extra = { ...state, optimizer: { ...state.optimizer, buffers: { ...state.optimizer.buffers, velocity: new Float64Array(2) } } };
    expect(() => Session.restore(ex, extra)).toThrow("state.optimizer.buffers.velocity is not a buffer of the recipe's adam (it keeps m, v)");
    const scalar = { ...state, optimizer: { ...state.optimizer, scalars: { hDiag: 1 } } };
    expect(() => Session.restore(ex, scalar)).toThrow("state.optimizer.scalars.hDiag is not a scalar of the recipe's adam (it keeps no scalars)");
    expect(Session.restore(ex, state).fingerprint()).toBe(s.fingerprint());
  });
});
