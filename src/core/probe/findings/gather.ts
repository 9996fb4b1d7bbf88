/**
 * Builds the parts of the {@link Evidence} from a session, so the cell, the CLI and the tests
 * gather it the same way. Cheap parts cost at most one forward pass; costly parts say what they
 * cost. Every result is plain data.
 */
import type { Experiment, Recipe, Setup } from '../../setup';
import type { StepRecord } from '../../state';
import type { Objective } from '../../objective';
import { Rng } from '../../rng';
import { standardizeData } from '../../data/standardize';
import { effectiveBatch } from '../../session/adapt';
import { Session } from '../../session/live';
import { learningRate } from '../../optim/schedule';
import { lanczosExtremes } from '../../linalg/lanczos';
import { curvatureOperator } from '../curvature/operator';
import { preconditionerDiagonal, stabilityBound, stabilityFactor, stepMetric } from '../curvature/stability';
import type { CurvatureSession } from '../curvature/measure-session';
import type { CurvatureSummary } from '../curvature/summary';
import type { AuditResult } from '../gradcheck';
import { activationHealth, type ActivationHealth, type LayerInspector } from '../activation-health';
import { initCheck } from '../init-check';
import { dataChecks } from '../data-checks';
import type { AuditFacts, CurvatureFacts, Evidence, SetupFacts, SharpnessPoint, StandardizedFit } from './evidence';

/** Data loss of the best constant prediction (mse: mean column variance; cross-entropy: class entropy; binary: mean column entropy). */
export function baselineLoss(setup: Setup): number | null {
  const d = setup.data;
  if (setup.model.kind !== 'network' || d === undefined) return null;
  const { rows, targets, y } = d;
  switch (setup.loss) {
    case 'mse': {
      let s = 0;
      for (let j = 0; j < targets; j++) {
        let m = 0;
        for (let r = 0; r < rows; r++) m += y[r * targets + j];
        m /= rows;
        for (let r = 0; r < rows; r++) s += (y[r * targets + j] - m) ** 2;
      }
      return s / (rows * targets);
    }
    case 'cross-entropy': {
      const counts = new Map<number, number>();
      for (let r = 0; r < rows; r++) counts.set(y[r], (counts.get(y[r]) ?? 0) + 1);
      let h = 0;
      for (const c of counts.values()) h -= (c / rows) * Math.log(c / rows);
      return h;
    }
    case 'binary-cross-entropy': {
      let h = 0;
      for (let j = 0; j < targets; j++) {
        let p = 0;
        for (let r = 0; r < rows; r++) p += y[r * targets + j];
        p /= rows;
        if (p > 0 && p < 1) h -= p * Math.log(p) + (1 - p) * Math.log(1 - p);
      }
      return h / targets;
    }
    case 'expression': // the user's term: no known best constant
      return null;
    default: {
      const never: never = setup.loss;
      throw new Error(`unknown loss '${String(never)}'`);
    }
  }
}

/** The plain summary of an experiment the rules read. */
export function setupFacts(experiment: Experiment): SetupFacts {
  const { setup, recipe } = experiment;
  const m = setup.model;
  const rows = setup.data?.rows ?? 0;
  const batch = effectiveBatch(recipe, rows);
  const layers = m.kind === 'network'
    ? m.layers.map((l, i) => ({ activation: l.activation, units: l.units, fanIn: i === 0 ? m.inputs : m.layers[i - 1].units, lrScale: recipe.layers[i]?.lrScale ?? 1 }))
    : [];
  return {
    model: m.kind, optimizer: recipe.optimizer, lr: recipe.lr, momentum: recipe.momentum, nesterov: recipe.nesterov, schedule: recipe.schedule.kind,
    weightDecay: recipe.weightDecay, batch: batch === 0 ? rows : batch, fullBatch: batch === 0, rows, loss: setup.loss, layers,
    init: m.kind === 'network' ? m.init : 'lecun-normal', gain: m.kind === 'network' ? m.gain : 1,
    explicitWeights: m.kind === 'network' && m.weights !== undefined, standardized: setup.data?.standardized !== undefined,
    baselineLoss: baselineLoss(setup), heldOut: setup.data?.heldOut !== undefined,
  };
}

/**
 * The parts that depend only on the experiment (compute once per branch): setup facts, the
 * initialization check (four forward passes over the training rows), the data checks and the
 * activation health at step 0.
 */
export function staticEvidence(experiment: Experiment): Pick<Evidence, 'setup' | 'init' | 'data' | 'activationsStart'> {
  const out: Pick<Evidence, 'setup' | 'init' | 'data' | 'activationsStart'> = { setup: setupFacts(experiment) };
  const { setup } = experiment;
  const check = initCheck(setup, experiment.seed);
  if (check !== null) {
    out.init = check;
    out.activationsStart = check.health;
  }
  if (setup.model.kind === 'network' && setup.data !== undefined) {
    out.data = dataChecks(setup.data, setup.loss, setup.model.layers[setup.model.layers.length - 1].units);
  }
  return out;
}

function isInspector(o: Objective): o is Objective & LayerInspector {
  return typeof (o as Partial<LayerInspector>).inspectLayers === 'function';
}

/** Activation health at the session's current weights (one forward pass), or undefined for analytic objectives. */
export function currentActivations(session: Session): ActivationHealth | undefined {
  const m = session.experiment.setup.model;
  if (m.kind !== 'network' || !isInspector(session.objective)) return undefined;
  return activationHealth(session.objective, m, Float64Array.from(session.parameters), session.stepCount);
}

/** The parts that change while stepping: the trajectory, checkpoint steps and the current activation health. */
export function liveEvidence(session: Session, trajectory: readonly StepRecord[], checkpointSteps?: readonly number[]): Pick<Evidence, 'trajectory' | 'checkpointSteps' | 'activationsNow'> {
  const out: Pick<Evidence, 'trajectory' | 'checkpointSteps' | 'activationsNow'> = { trajectory };
  if (checkpointSteps !== undefined) out.checkpointSteps = checkpointSteps;
  const now = currentActivations(session);
  if (now !== undefined) out.activationsNow = now;
  return out;
}

/** Options of {@link sharpnessPoint}. */
export interface SharpnessPointOptions {
  /** Lanczos residual tolerance (default 1e-8) and step cap (default 100). */
  tol?: number;
  maxIterations?: number;
}

const allFinite = (w: Float64Array): boolean => w.every((x) => Number.isFinite(x));

/**
 * λmax of the operator the stability rule uses at the session's weights (top-1 Lanczos on its
 * curvature rows; Golub & Van Loan 4th ed., §10.1) against the learning rate of the next update.
 * Null when the weights are not finite, no learning-rate limit applies (line searches, Newton),
 * or an adaptive optimizer has no preconditioner yet (step 0). Costs up to `maxIterations`
 * Hessian-vector products.
 */
export function sharpnessPoint(session: CurvatureSession, rng: Rng, options: SharpnessPointOptions = {}): SharpnessPoint | null {
  const recipe = session.experiment.recipe;
  const f = stabilityFactor(recipe);
  const w = Float64Array.from(session.parameters);
  if (f.factor === null || !allFinite(w)) return null;
  const precond = f.preconditioned ? preconditionerDiagonal(recipe, session.optimizerState()) : null;
  if (f.preconditioned && precond === null) return null;
  const metric = stepMetric(recipe, session.objective.blocks, precond);
  const op = curvatureOperator(session.objective, w, { rows: session.curvatureRows(), scaling: metric.scaling ?? undefined, shift: metric.shift });
  const l = lanczosExtremes(op.apply, w.length, rng, { k: 1, which: 'largest', tol: options.tol ?? 1e-8, maxIterations: options.maxIterations ?? 100 });
  const top = l.largest[0];
  if (top === undefined || !Number.isFinite(top.value)) return null;
  return sharpnessPointFrom(recipe, session.stepCount, top.value, top.errorBound, learningRate(recipe, session.stepCount));
}

/**
 * A {@link SharpnessPoint} from a sharpness measured elsewhere (e.g. a sharpness trace's λmax,
 * which is the step operator's sharpness for plain SGD without per-layer rates or weight decay):
 * the recipe's stability bound at that sharpness and learning rate. An infinite limit (no positive
 * curvature) is stored as null so the point stays JSON-safe.
 */
export function sharpnessPointFrom(recipe: Recipe, step: number, sharpness: number, errorBound: number, lr: number): SharpnessPoint {
  const b = stabilityBound(recipe, sharpness, lr);
  const limit = b.largestStableLr !== null && Number.isFinite(b.largestStableLr) ? b.largestStableLr : null;
  return { step, sharpness, errorBound, lr, largestStableLr: limit, margin: limit === null ? null : b.margin, formula: b.formula };
}

/** The stability limit at step 0 of the experiment with standardized inputs (null when not a network, already standardized, or no limit applies at step 0). */
export function standardizedFit(experiment: Experiment, rng: Rng, options: SharpnessPointOptions = {}): StandardizedFit | null {
  const { setup } = experiment;
  if (setup.model.kind !== 'network' || setup.data === undefined || setup.data.standardized !== undefined) return null;
  const session = Session.create({ seed: experiment.seed, setup: { ...setup, data: standardizeData(setup.data) }, recipe: experiment.recipe });
  const p = sharpnessPoint(session, rng, options);
  return p === null ? null : { sharpness: p.sharpness, largestStableLr: p.largestStableLr, formula: p.formula };
}

/** The numbers of a curvature summary the rules read. */
export function curvatureFacts(summary: CurvatureSummary, step: number): CurvatureFacts {
  return { step, method: summary.method, lambdaMax: summary.lambdaMax, lambdaMin: summary.lambdaMin, conditionNumber: summary.conditionNumber, negativeShare: summary.negativeShare };
}

/** The per-layer verdicts of a gradient audit. */
export function auditFacts(result: AuditResult, step: number): AuditFacts {
  return { step, layers: result.layers.map((l) => ({ layer: l.layer, maxRelError: l.maxRelError, verdict: l.verdict })), bestOverSweep: result.bestOverSweep.maxRelError };
}


/** A seeded generator for the findings' costly measurements: fork `diagnose` of the seed, so no other stream shifts. */
export function diagnoseRng(seed: number): Rng {
  return Rng.fromSeed(seed).fork('diagnose');
}
