/**
 * A whole diagnosis in one call (what `stepwell diagnose` runs): step the experiment's main
 * branch N times in a {@link Grove}, measure the sharpness against the stability limit at a
 * bounded number of evenly spaced steps (step 0 included), then gather the remaining evidence at
 * the end — activation health, a full curvature measurement, the gradient audit and the noise
 * scale at the final weights (skipped after a divergence), and the stability limit of the
 * standardized setup when the inputs are unscaled — and evaluate every rule.
 *
 * Costs: N updates; up to `curvaturePoints` top-1 Lanczos runs (≤ 100 Hessian-vector products
 * each); one dense Hessian (P ≤ `denseLimit`) or a two-ended Lanczos run; the audit's 2 × sample
 * loss evaluations plus its sweep; `noiseSample` single-row gradients.
 */
import type { Experiment } from '../../setup';
import { Grove } from '../../session/grove';
import { measureSessionCurvature } from '../curvature/measure-session';
import { auditGradient } from '../gradcheck';
import { gradientNoiseScale } from '../noise-scale';
import type { Finding } from './types';
import type { Evidence, SharpnessPoint } from './evidence';
import { evaluateFindings } from './engine';
import { auditFacts, curvatureFacts, diagnoseRng, liveEvidence, sharpnessPoint, standardizedFit, staticEvidence } from './gather';
import { inputsUnscaled } from './proposals';
import { diverged } from './rules/stability';

/** Options of {@link diagnoseExperiment}. */
export interface DiagnoseOptions {
  /** Updates to apply (default 100). */
  steps?: number;
  /** Most sharpness measurements along the way (default 20, at least 1 = step 0 only). */
  curvaturePoints?: number;
  /** Largest P for the dense final curvature (default 2000; Lanczos above). */
  denseLimit?: number;
  /** Parameters the gradient audit checks (default 200) and rows the noise scale samples (default 64). */
  auditSample?: number;
  noiseSample?: number;
}

/** Result of {@link diagnoseExperiment}. */
export interface DiagnoseResult {
  steps: number;
  final: { step: number; loss: number };
  findings: Finding[];
  evidence: Evidence;
}

/** Steps at which the sharpness is measured: 0 and evenly spaced multiples up to `steps` (at most `points` in all). */
export function measurementSteps(steps: number, points: number): number[] {
  if (!Number.isInteger(points) || points < 1) throw new RangeError(`curvaturePoints must be a positive integer, got ${points}`);
  if (points === 1 || steps === 0) return [0];
  const every = Math.max(1, Math.ceil(steps / (points - 1)));
  const out: number[] = [];
  for (let s = 0; s <= steps; s += every) out.push(s);
  return out;
}

/** Runs a diagnosis (see the module comment). Deterministic for a given experiment and options. */
export function diagnoseExperiment(experiment: Experiment, options: DiagnoseOptions = {}): DiagnoseResult {
  const steps = options.steps ?? 100;
  if (!Number.isInteger(steps) || steps < 0) throw new RangeError(`steps must be a non-negative integer, got ${steps}`);
  const rng = diagnoseRng(experiment.seed);
  const sharpRng = rng.fork('sharpness');
  const grove = Grove.create(experiment);
  const at = new Set(measurementSteps(steps, options.curvaturePoints ?? 20));
  const sharpness: SharpnessPoint[] = [];
  const measure = (): void => {
    const p = sharpnessPoint(grove.session('main'), sharpRng);
    if (p !== null) sharpness.push(p);
  };
  if (at.has(0)) measure();
  for (let s = 1; s <= steps; s++) {
    grove.step('main', 1);
    if (at.has(s)) measure();
  }
  const session = grove.session('main');
  const evidence: Evidence = { ...staticEvidence(experiment), ...liveEvidence(session, grove.trajectory('main'), grove.checkpointSteps('main')), sharpness };
  const w = Float64Array.from(session.parameters);
  const finalLoss = evidence.trajectory[evidence.trajectory.length - 1].loss;
  // After a divergence the final weights are blown up: their readouts would describe nothing the
  // user can act on (and the audit refuses them), so only the `diverged` finding speaks then.
  const blownUp = diverged.evaluate(evidence).length > 0;
  if (!blownUp && Number.isFinite(finalLoss) && w.every((x) => Number.isFinite(x))) {
    try {
      const report = measureSessionCurvature(session, rng.fork('curvature'), { k: 1, density: false, traceProbes: 0, denseLimit: options.denseLimit });
      evidence.curvature = curvatureFacts(report.summary, session.stepCount);
    } catch {
      // A curvature that cannot be measured (non-finite products) leaves the curvature rules quiet.
    }
    evidence.audit = auditFacts(auditGradient(session.objective, w, { rng: rng.fork('audit'), sample: options.auditSample ?? 200 }), session.stepCount);
    if (session.objective.rowCount > 0) {
      evidence.noise = gradientNoiseScale(session.objective, w, rng.fork('noise'), { sample: options.noiseSample ?? 64, batch: evidence.setup.batch, step: session.stepCount });
    }
  }
  if (inputsUnscaled(evidence)) {
    const fit = standardizedFit(experiment, rng.fork('standardized'));
    if (fit !== null) evidence.standardized = fit;
  }
  return { steps, final: { step: session.stepCount, loss: finalLoss }, findings: evaluateFindings(evidence), evidence };
}
