/** `stepwell inspect SPEC`: numbers at the initial point of an experiment. */
import { buildObjective, initialParameters } from '../core/build';
import { Rng } from '../core/rng';
import { auditGradient } from '../core/probe/gradcheck';
import { symmetricEigen } from '../core/linalg/symmetric-eigen';
import type { Objective } from '../core/objective';
import { CliError, loadExperiment, positiveInt, readVector } from './io';

/** Flags of `inspect`. */
export interface InspectFlags {
  json?: boolean;
  vector?: string;
  top?: string;
  bottom?: string;
  trace?: boolean;
  density?: boolean;
  set?: string[];
}

/** Largest P for which `inspect` assembles the dense Hessian. */
export const DENSE_LIMIT = 2000;

/** The dense Hessian from P exact Hessian-vector products, symmetrized as (H + Hᵀ)/2. */
function assembleHessian(objective: Objective, w: Float64Array): Float64Array {
  const p = objective.parameterCount;
  const h = new Float64Array(p * p);
  const e = new Float64Array(p);
  const col = new Float64Array(p);
  for (let j = 0; j < p; j++) {
    e[j] = 1;
    objective.hvp(w, e, col);
    e[j] = 0;
    for (let i = 0; i < p; i++) h[i * p + j] = col[i];
  }
  for (let i = 0; i < p; i++) for (let j = 0; j < i; j++) { const s = 0.5 * (h[i * p + j] + h[j * p + i]); h[i * p + j] = s; h[j * p + i] = s; }
  return h;
}

/** Runs the command and returns its output text. */
export function inspectCommand(path: string, flags: InspectFlags): string {
  const { experiment } = loadExperiment(path, flags.set);
  const objective = buildObjective(experiment.setup);
  const w = initialParameters(experiment.setup, Rng.fromSeed(experiment.seed).fork('init'));
  const P = objective.parameterCount;
  const gradient = new Float64Array(P);
  const loss = objective.gradient(w, gradient);
  const out: Record<string, unknown> = { parameterCount: P, loss, gradient: Array.from(gradient) };
  if (flags.vector !== undefined) {
    const v = readVector(flags.vector, P);
    const hv = new Float64Array(P);
    objective.hvp(w, v, hv);
    out.hvp = Array.from(hv);
  }
  const top = positiveInt(flags.top, '--top', 0);
  const bottom = positiveInt(flags.bottom, '--bottom', 0);
  if (top > 0 || bottom > 0) {
    if (P > DENSE_LIMIT) throw new CliError(`--top/--bottom use the dense Hessian, limited to ${DENSE_LIMIT} parameters; this model has ${P}`);
    const values = symmetricEigen(assembleHessian(objective, w), P).values; // ascending
    if (top > 0) out.eigenvalues = Array.from(values).reverse().slice(0, top);
    if (bottom > 0) out.bottomEigenvalues = Array.from(values).slice(0, bottom);
    out.eigenMethod = 'dense';
  }
  const audit = auditGradient(objective, w, { rng: Rng.fromSeed(experiment.seed).fork('audit') });
  out.gradcheck = {
    maxRelError: audit.maxRelError, verdict: audit.verdict, checked: audit.checked, sampled: audit.sampled, h: audit.h,
    layers: audit.layers.map((l) => ({ layer: l.layer, maxRelError: l.maxRelError, medianRelError: l.medianRelError, worstIndex: l.worstIndex, verdict: l.verdict })),
  };
  if (flags.json) return JSON.stringify(out) + '\n';
  const lines = [
    `parameters ${P}, loss ${loss.toPrecision(10)}, |gradient| ${Math.hypot(...gradient).toExponential(4)}`,
    `gradient audit: ${audit.verdict} (max relative error ${audit.maxRelError.toExponential(2)} over ${audit.checked}${audit.sampled ? ' sampled' : ''} parameters)`,
    ...audit.layers.map((l) => `  layer ${l.layer}: max ${l.maxRelError.toExponential(2)}, median ${l.medianRelError.toExponential(2)}, ${l.verdict}`),
  ];
  if (out.eigenvalues) lines.push(`top eigenvalues: ${(out.eigenvalues as number[]).map((x) => x.toPrecision(6)).join(', ')}`);
  if (out.bottomEigenvalues) lines.push(`bottom eigenvalues: ${(out.bottomEigenvalues as number[]).map((x) => x.toPrecision(6)).join(', ')}`);
  return lines.join('\n') + '\n';
}
