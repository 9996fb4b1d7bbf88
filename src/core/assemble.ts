/**
 * Builds the objective and the initial parameters of a setup: the one entry point the
 * session, the CLI, the worker and the tests share.
 */
import type { Setup } from './setup';
import type { Objective } from './objective';
import type { Rng } from './rng';
import { Network } from './model/network';
import { Quadratic, Rosenbrock } from './model/analytic';
import { initNetwork } from './model/init';

/** The training objective of a setup (the network over its data, or an analytic function). */
export function buildObjective(setup: Setup): Objective {
  const m = setup.model;
  switch (m.kind) {
    case 'network':
      if (!setup.data) throw new Error('a network model needs data (data.x, data.y)');
      return new Network(m, setup.data, setup.loss, setup.l2, { lossExpression: setup.lossExpression });
    case 'quadratic':
      return new Quadratic(m.matrix, m.center);
    case 'rosenbrock':
      return new Rosenbrock(m.start.length);
    default: {
      const never: never = m;
      throw new Error(`unknown model kind '${String((never as { kind: string }).kind)}'`);
    }
  }
}

/** The objective on the held-out split, when the setup has one (same weights, same loss). */
export function buildHeldOutObjective(setup: Setup): Objective | undefined {
  const m = setup.model;
  const h = setup.data?.heldOut;
  if (m.kind !== 'network' || !setup.data || !h) return undefined;
  return new Network(m, { rows: h.rows, inputs: setup.data.inputs, targets: setup.data.targets, x: h.x, y: h.y }, setup.loss, setup.l2, { lossExpression: setup.lossExpression });
}

/**
 * The initial parameter vector: explicit weights or a seeded draw for networks, the start
 * point for analytic objectives.
 * @param rng generator for the draw (the session passes `Rng.fromSeed(seed).fork('init')`)
 */
export function initialParameters(setup: Setup, rng: Rng): Float64Array {
  const m = setup.model;
  switch (m.kind) {
    case 'network':
      return initNetwork(m, rng);
    case 'quadratic':
    case 'rosenbrock':
      return Float64Array.from(m.start);
    default: {
      const never: never = m;
      throw new Error(`unknown model kind '${String((never as { kind: string }).kind)}'`);
    }
  }
}
