/** `stepwell inspect SPEC`: numbers at the initial point of an experiment. */
import { buildObjective, initialParameters } from '../core/assemble';
import { Rng } from '../core/rng';
import { AuditDivergedError, auditGradient, type AuditResult } from '../core/probe/gradcheck';
import { norm2 } from '../core/objective';
import { spectralDensity } from '../core/linalg';
import { curvatureOperator, measureCurvature } from '../core/probe/curvature';
import { CliError, loadExperiment, positiveInt, readVector, toJson, type CommandResult } from './io';

/** Flags of `inspect`. */
export interface InspectFlags {
  /** `NAME=VALUE` size limits over the defaults (`experiment/limits.ts`). */
  limit?: string[];
  json?: boolean;
  vector?: string;
  top?: string;
  bottom?: string;
  trace?: boolean;
  density?: boolean;
  set?: string[];
}

/** Runs the command and returns its output text. */
export function inspectCommand(path: string, flags: InspectFlags): CommandResult {
  const { experiment, warnings } = loadExperiment(path, flags.set, flags.limit);
  const objective = buildObjective(experiment.setup);
  const w = initialParameters(experiment.setup, Rng.fromSeed(experiment.seed).fork('init'));
  const P = objective.parameterCount;
  const gradient = new Float64Array(P);
  const loss = objective.gradient(w, gradient);
  if (!Number.isFinite(loss)) {
    throw new CliError(`${path}: the loss is already ${loss} at the initial weights: check model.gain, model.init, explicit weights and the data (no readout means anything there)`);
  }
  const out: Record<string, unknown> = { parameterCount: P, loss, gradient: Array.from(gradient) };
  if (flags.vector !== undefined) {
    const v = readVector(flags.vector, P);
    const hv = new Float64Array(P);
    objective.hvp(w, v, hv);
    out.hvp = Array.from(hv);
  }
  const top = positiveInt(flags.top, '--top', 0);
  const bottom = positiveInt(flags.bottom, '--bottom', 0);
  const probeRng = Rng.fromSeed(experiment.seed).fork('probe');
  if (top > 0 || bottom > 0 || flags.trace) {
    // Dense spectrum up to the dense limit, Lanczos with residual bounds beyond it.
    const k = Math.max(top, bottom, 1);
    const { spectrum, summary } = measureCurvature(objective, w, experiment.recipe, probeRng.fork('spectrum'), {
      k, density: false, traceProbes: flags.trace ? 32 : 0,
    });
    out.eigenMethod = spectrum.method;
    if (top > 0) {
      out.eigenvalues = spectrum.top.slice(0, top);
      out.eigenvalueErrorBounds = spectrum.topBounds.slice(0, top);
    }
    if (bottom > 0) {
      out.bottomEigenvalues = spectrum.bottom.slice(0, bottom);
      out.bottomEigenvalueErrorBounds = spectrum.bottomBounds.slice(0, bottom);
    }
    if (flags.trace && spectrum.trace) out.trace = { value: spectrum.trace.value, standardError: spectrum.trace.standardError, method: spectrum.trace.method };
    out.stability = { ...summary.stability, caveat: summary.caveat };
  }
  if (flags.density) {
    const d = spectralDensity(curvatureOperator(objective, w).apply, P, probeRng.fork('density'));
    out.density = { grid: Array.from(d.grid), density: Array.from(d.density), sigma: d.sigma, mean: d.mean, probes: d.probes, method: 'stochastic Lanczos quadrature' };
  }
  let audit: AuditResult | null = null;
  try {
    audit = auditGradient(objective, w, { rng: Rng.fromSeed(experiment.seed).fork('audit') });
    out.gradcheck = {
      maxRelError: audit.maxRelError, verdict: audit.verdict, checked: audit.checked, sampled: audit.sampled, h: audit.h,
      layers: audit.layers.map((l) => ({ layer: l.layer, maxRelError: l.maxRelError, medianRelError: l.medianRelError, worstIndex: l.worstIndex, worstBlock: l.worstBlock, worstAt: l.worstAt, verdict: l.verdict })),
    };
  } catch (e) {
    if (!(e instanceof AuditDivergedError)) throw e;
    out.gradcheck = { error: e.message };
  }
  if (flags.json) return { out: toJson(out) + '\n', warnings, code: 0 };
  const lines = [
    `parameters ${P}, loss ${loss.toPrecision(10)}, |gradient| ${norm2(gradient).toExponential(4)}`,
    ...(audit === null
      ? [`gradient audit: ${(out.gradcheck as { error: string }).error}`]
      : [
          `gradient audit: ${audit.verdict} (max relative error ${audit.maxRelError.toExponential(2)} over ${audit.checked}${audit.sampled ? ' sampled' : ''} parameters)`,
          ...audit.layers.map((l) => `  layer ${l.layer}: max ${l.maxRelError.toExponential(2)}, median ${l.medianRelError.toExponential(2)}, ${l.verdict}`),
        ]),
  ];
  if (out.eigenvalues) lines.push(`top eigenvalues (${String(out.eigenMethod)}): ${(out.eigenvalues as number[]).map((x) => x.toPrecision(6)).join(', ')}`);
  if (out.bottomEigenvalues) lines.push(`bottom eigenvalues: ${(out.bottomEigenvalues as number[]).map((x) => x.toPrecision(6)).join(', ')}`);
  if (out.trace) { const t = out.trace as { value: number; standardError: number; method: string }; lines.push(`trace: ${t.value.toPrecision(6)} ± ${t.standardError.toPrecision(2)} (${t.method})`); }
  if (out.stability) { const st = out.stability as { largestStableLr: number | null; margin: number | null; formula: string; caveat: string }; lines.push(`largest stable learning rate: ${st.largestStableLr === null ? 'no fixed limit' : st.largestStableLr.toPrecision(4)} (${st.formula}); stability margin ${st.margin === null ? '-' : st.margin.toPrecision(3)}`, st.caveat); }
  return { out: lines.join('\n') + '\n', warnings, code: 0 };
}
