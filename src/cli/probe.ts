/**
 * `stepwell probe SPEC --what line|plane|range|precision`: steps the recipe `--steps` times, then
 * takes one deeper readout at that state — the loss along the next update and the top Hessian
 * eigenvector, the loss over a plane, the learning-rate range test on a throwaway fork, or the
 * loss and accuracy with the weights rounded to fewer significant bits.
 */
import { Rng } from '../core/rng';
import { Session } from '../core/session/live';
import { lineAt, planeAt, precisionAt, rangeTestAt } from '../core/probe/readouts-at';
import type { LineCurve } from '../core/probe/line';
import type { PlaneKind } from '../core/probe/slice';
import { CliError, loadExperiment, positiveInt, toJson, type CommandResult } from './io';
import { MAX_STEPS } from './run';
import { compareBatchSizes } from '../core/probe/batch-compare';

/** Flags of `probe`. */
export interface ProbeFlags {
  what?: string;
  steps?: string;
  points?: string;
  from?: string;
  to?: string;
  directions?: string;
  bits?: string;
  batches?: string;
  examples?: string;
  json?: boolean;
  set?: string[];
  limit?: string[];
}

/** The readouts `--what` names. */
export const PROBE_KINDS = ['line', 'plane', 'range', 'precision', 'batch'] as const;
type ProbeKind = (typeof PROBE_KINDS)[number];

/** Most trajectory points kept for the plane's projected path. */
const PATH_POINTS = 50;

function num(x: number | null | undefined): string {
  if (x === null || x === undefined) return '—';
  if (!Number.isFinite(x)) return Number.isNaN(x) ? 'NaN' : x > 0 ? '∞' : '−∞';
  return x !== 0 && (Math.abs(x) < 1e-3 || Math.abs(x) >= 1e5) ? x.toExponential(3) : String(Number(x.toPrecision(4)));
}

function finiteNumber(value: string | undefined, flag: string): number | undefined {
  if (value === undefined) return undefined;
  const x = Number(value);
  if (value.trim() === '' || !Number.isFinite(x)) throw new CliError(`${flag} must be a finite number, got '${value}'`);
  return x;
}

function kindOf(value: string | undefined): ProbeKind {
  if (value === undefined) throw new CliError(`probe needs --what ${PROBE_KINDS.join('|')}`);
  if (!(PROBE_KINDS as readonly string[]).includes(value)) throw new CliError(`--what must be one of ${PROBE_KINDS.join(', ')}, got '${value}'`);
  return value as ProbeKind;
}

function bitsOf(value: string | undefined): number[] | undefined {
  if (value === undefined) return undefined;
  const list = value.split(',').map((s) => Number(s.trim()));
  if (list.length === 0 || list.some((k) => !Number.isInteger(k) || k < 1 || k > 53)) throw new CliError(`--bits must be a comma-separated list of integers from 1 to 53, got '${value}'`);
  return list;
}

function batchesOf(value: string | undefined): number[] {
  const list = (value ?? '').split(',').map((s) => s.trim()).filter((s) => s !== '');
  const sizes = list.map((s) => (s === 'full' ? 0 : /^\d+$/.test(s) && Number(s) > 0 ? Number(s) : NaN));
  if (sizes.length < 2 || sizes.some((b) => Number.isNaN(b))) throw new CliError(`--batches must list at least two batch sizes (positive integers or full), e.g. --batches 4,16,full; got '${value ?? ''}'`);
  return sizes;
}

function curveLines(c: LineCurve, title: string, unit: string): string[] {
  const lines = [`${title}: slope ${num(c.slope)}, curvature ${num(c.curvature)}; step taken at t = ${num(c.stepAt)} ${unit}`];
  lines.push(`  Brent's minimum: ${c.minimum.t === null ? c.minimum.note ?? 'none' : `t = ${num(c.minimum.t)}, loss ${num(c.minimum.loss)} (${c.minimum.evaluations} evaluations)`}; quadratic model's minimum: ${c.quadraticMinimum === null ? 'none (curvature ≤ 0)' : `t = ${num(c.quadraticMinimum)}`}`);
  const every = Math.max(1, Math.floor(c.t.length / 10));
  lines.push('  t          loss          quadratic model');
  for (let i = 0; i < c.t.length; i += every) lines.push(`  ${num(c.t[i]).padEnd(10)} ${num(c.loss[i]).padEnd(13)} ${num(c.quadratic[i])}`);
  return lines;
}

/** Runs the command (exit 0 once the readout is taken; a diverging fork is part of a range test, not an error). */
export function probeCommand(path: string, flags: ProbeFlags): CommandResult {
  try {
    return probe(path, flags);
  } catch (e) {
    // the readouts refuse what they cannot measure (a zero direction, too few parameters) with a RangeError that says why
    if (e instanceof RangeError) throw new CliError(e.message);
    throw e;
  }
}

function probe(path: string, flags: ProbeFlags): CommandResult {
  const what = kindOf(flags.what);
  const steps = positiveInt(flags.steps, '--steps', 0, MAX_STEPS);
  const points = flags.points === undefined ? undefined : positiveInt(flags.points, '--points', 0, 201);
  const from = finiteNumber(flags.from, '--from');
  const to = finiteNumber(flags.to, '--to');
  const bits = bitsOf(flags.bits);
  const directions = (flags.directions ?? 'random') as PlaneKind;
  if (directions !== 'random' && directions !== 'eigenvectors') throw new CliError(`--directions must be random or eigenvectors, got '${flags.directions}'`);
  const { experiment, warnings } = loadExperiment(path, flags.set, flags.limit);
  const session = Session.create(experiment);
  const stride = Math.max(1, Math.ceil(steps / PATH_POINTS));
  const pathSteps: number[] = [0];
  const pathWeights: Float64Array[] = [Float64Array.from(session.parameters)];
  for (let k = 1; k <= steps; k++) {
    const [rec] = session.step(1);
    if (!Number.isFinite(rec.loss)) throw new CliError(`the loss became ${rec.loss} at step ${k}: take the readout at an earlier step (--steps ${k - 1})`, 3);
    if (k % stride === 0 || k === steps) { pathSteps.push(k); pathWeights.push(Float64Array.from(session.parameters)); }
  }
  const rng = Rng.fromSeed(experiment.seed).fork(`landscape-${what}`);
  const note = 'A small proxy model: these readouts describe this setup at this scale, not the full-size run.';
  switch (what) {
    case 'line': {
      const r = lineAt(session, rng, { points, from, to });
      if (flags.json) return { out: toJson({ what, ...r }) + '\n', warnings, code: 0 };
      const lines = [`line readout at step ${r.step}, loss ${num(r.loss)}`];
      lines.push(...curveLines(r.update, 'along the next update (t in steps; t = 1 is the step taken)', 'steps'));
      if (r.eigenvector) lines.push('', ...curveLines(r.eigenvector, `along the top Hessian eigenvector, λ = ${num(r.eigenvector.eigenvalue)} (t in parameter distance)`, ''));
      else lines.push('', 'no positive Hessian eigenvalue: no eigenvector line');
      return { out: [...lines, '', note].join('\n') + '\n', warnings, code: 0 };
    }
    case 'plane': {
      const r = planeAt(session, directions, rng, { steps: pathSteps, weights: pathWeights }, { points: points ?? 21 });
      if (r === null) throw new CliError('the plane readout was stopped');
      if (flags.json) return { out: toJson({ what, ...r }) + '\n', warnings, code: 0 };
      const flat = r.loss.flat();
      const lines = [`plane readout at step ${r.step} over ${directions === 'random' ? 'two filter-normalized random directions' : `the top two Hessian eigenvectors (λ = ${num(r.eigenvalues?.[0])}, ${num(r.eigenvalues?.[1])})`}`,
        `  grid ${r.alpha.length} × ${r.beta.length}, α and β from ${num(r.alpha[0])} to ${num(r.alpha[r.alpha.length - 1])}; loss from ${num(Math.min(...flat))} to ${num(Math.max(...flat))}`,
        `  trajectory (${r.path.steps.length} points) in plane coordinates:`];
      r.path.steps.forEach((s, i) => lines.push(`  step ${String(s).padEnd(6)} α ${num(r.path.alpha[i]).padEnd(11)} β ${num(r.path.beta[i]).padEnd(11)} off the plane ${num(r.path.offPlane[i])}`));
      return { out: [...lines, '', note].join('\n') + '\n', warnings, code: 0 };
    }
    case 'range': {
      const r = rangeTestAt(session, rng, { from, to, steps: points });
      if (flags.json) return { out: toJson({ what, ...r }) + '\n', warnings, code: 0 };
      const lines = [`learning-rate range test from step ${r.startStep} (loss ${num(r.startLoss)}), ${r.lr.length} updates on a throwaway fork; ${r.end}`,
        `  suggested range: ${r.suggested === null ? 'none (the loss never fell 1% below its start)' : `${num(r.suggested.low)} … ${num(r.suggested.high)}`}`,
        `  stability limit now: ${r.limit === null || r.limit.largestStableLr === null ? 'none for this recipe' : `${r.limit.formula} = ${num(r.limit.largestStableLr)} (λmax ${num(r.limit.sharpness)})`}`,
        ...(r.beyondLimit ? ['  the suggested range reaches past the stability limit: one update per rate did not show the growth along the sharpest direction; in the quadratic picture at these weights a constant rate above the limit is unstable'] : []),
        '  lr           loss'];
      r.lr.forEach((eta, i) => lines.push(`  ${num(eta).padEnd(12)} ${num(r.loss[i])}`));
      return { out: [...lines, '', note].join('\n') + '\n', warnings, code: 0 };
    }
    case 'batch': {
      const sizes = batchesOf(flags.batches);
      const n = session.objective.rowCount;
      if (n === 0) throw new CliError('--what batch needs a data set: this objective has no rows');
      const budget = positiveInt(flags.examples, '--examples', 10 * n, Number.MAX_SAFE_INTEGER);
      if (budget === 0) throw new CliError('--examples must be positive');
      const r = compareBatchSizes(experiment, session.state(), session.objective, sizes, budget, rng);
      if (r === null) throw new CliError('the batch-size comparison was stopped');
      if (flags.json) return { out: toJson({ what, ...r }) + '\n', warnings, code: 0 };
      const b = r.noiseScale.noiseScale;
      const lines = [`batch sizes compared at ${r.budget} examples seen each, from step ${r.startStep} (${n} training rows)`,
        `  gradient noise scale B = tr(Σ)/|G|² = ${num(b)} (${r.noiseScale.sampleRows} of ${r.noiseScale.totalRows} rows sampled)`,
        '  batch     updates  final loss    against the best   against B'];
      for (const run of r.runs) lines.push(`  ${(run.full ? `${run.batch} (full)` : String(run.batch)).padEnd(9)} ${String(run.updates).padEnd(8)} ${num(run.finalLoss).padEnd(14)}${run.verdict.padEnd(19)}${run.noise}`);
      lines.push(r.best === null ? '  every run diverged' : `  lowest loss at equal examples: batch ${r.best}`);
      return { out: [...lines, '', note].join('\n') + '\n', warnings, code: 0 };
    }
    case 'precision': {
      const r = precisionAt(session, bits);
      if (flags.json) return { out: toJson({ what, ...r }) + '\n', warnings, code: 0 };
      const lines = [`precision tolerance at step ${r.step}: weights rounded to k significant bits (float64 arithmetic)`, '  bits  loss          change        accuracy'];
      for (const row of r.rows) lines.push(`  ${String(row.bits).padEnd(5)} ${num(row.loss).padEnd(13)} ${num(row.lossChange).padEnd(13)} ${row.accuracy === undefined ? '—' : `${(100 * row.accuracy).toFixed(1)}%`}`);
      return { out: [...lines, '', note].join('\n') + '\n', warnings, code: 0 };
    }
    default: {
      const never: never = what;
      throw new CliError(`unknown readout ${String(never)}`);
    }
  }
}
