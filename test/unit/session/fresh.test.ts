/**
 * `freshState` (the step-0 state without building an objective) is the state `Session.create`
 * starts from, bit for bit, for every optimizer family, full and mini-batches, analytic and
 * network objectives — the opener compares stored step-0 states with it.
 */
import { freshState, fingerprintState, Session } from '../../../src/core/session';
import { parseSpec, TEMPLATE_SPEC } from '../../../src/experiment';

const OPTIMIZERS = ['sgd', 'adagrad', 'rmsprop', 'adam', 'adamw', 'lbfgs', 'cg', 'newton', 'gauss-newton', 'minibatch-lbfgs'];
const CASES: [string, string][] = [
  ...OPTIMIZERS.map((o): [string, string] => [`template, ${o}, full batch`, TEMPLATE_SPEC.replace('optimizer: sgd', `optimizer: ${o}`)]),
  ...['sgd', 'adam', 'minibatch-lbfgs'].map((o): [string, string] => [`template, ${o}, batches of 3`, TEMPLATE_SPEC.replace('optimizer: sgd', `optimizer: ${o}`).replace('batch: full', 'batch: 3')]),
  ['template, orthogonal init, seed 99', TEMPLATE_SPEC.replace('init: lecun-normal', 'init: orthogonal').replace('seed: 7', 'seed: 99')],
  ['rosenbrock, adam', 'seed: 3\nmodel: { objective: rosenbrock }\nrecipe: { optimizer: adam, lr: 0.01 }\n']
];

describe('freshState', () => {
  it.each(CASES)('%s: equals the state Session.create starts from', (_name, spec) => {
    const parsed = parseSpec(spec);
    if (!parsed.ok) throw new Error(parsed.errors.map((e) => e.message).join('; '));
    const fresh = freshState(parsed.experiment);
    const session = Session.create(parsed.experiment);
    expect(fingerprintState(fresh)).toBe(session.fingerprint());
  });
});
