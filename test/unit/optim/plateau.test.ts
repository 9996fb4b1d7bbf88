/**
 * Reduce-on-plateau keeps its state in the optimizer state: a session restored from a saved state
 * (or from its ledger encoding) continues bit for bit, and the multiplier follows the rule of
 * torch.optim.lr_scheduler.ReduceLROnPlateau (values against torch are in
 * test/reference/optim/options.golden.test.ts; here only invariants).
 */
import { Session } from '../../../src/core/session/live';
import { decodeSessionState, encodeSessionState } from '../../../src/ledger/codec';
import { observePlateau, initPlateau } from '../../../src/core/optim/plateau';
import type { OptimizerState } from '../../../src/core/state';
import { experiment, TestQuadratic } from './fixtures';

const plateau = { kind: 'plateau', factor: 0.5, patience: 1, threshold: 0, thresholdMode: 'rel', cooldown: 1, floor: 0.2 } as const;

describe('reduce-on-plateau state', () => {
  it('halves after patience + 1 updates without improvement, waits out the cool-down, stops at the floor', () => {
    const s: OptimizerState = { kind: 'sgd', t: 0, buffers: {}, scalars: {} };
    initPlateau(s);
    const factors = [1, 1, 1, 1, 1, 1, 1, 1].map(() => {
      observePlateau(plateau, s, 5); // the same loss every time: never an improvement after the first
      return s.scalars['plateau.factor'];
    });
    // source: torch ReduceLROnPlateau rule (num_bad_epochs > patience → reduce; cooldown resets the count)
    expect(factors).toEqual([1, 1, 0.5, 0.5, 0.5, 0.25, 0.25, 0.25].map((f) => Math.max(f, 0.2)));
  });
  it('survives a checkpoint and the ledger encoding bit for bit', () => {
    const make = () => Session.create(experiment({ lr: 0.3, momentum: 0.5, schedule: { ...plateau, threshold: 1, thresholdMode: 'abs' } }), { objective: new TestQuadratic([[4, 1], [1, 3]], [1, -1]), initial: Float64Array.of(3, 2) });
    const whole = make();
    whole.step(30);
    const first = make();
    first.step(12);
    const saved = decodeSessionState(JSON.parse(JSON.stringify(encodeSessionState(first.state()))), 'state');
    expect(saved.optimizer.scalars['plateau.best']).toBe(first.state().optimizer.scalars['plateau.best']);
    const resumed = Session.restore(first.experiment, saved, { objective: new TestQuadratic([[4, 1], [1, 3]], [1, -1]) });
    resumed.step(18);
    expect(resumed.fingerprint()).toBe(whole.fingerprint());
    expect(whole.state().optimizer.scalars['plateau.factor']).toBeLessThan(1);
  });
});
