/**
 * The readout-only products with fused multiply-adds (WebAssembly relaxed SIMD, the
 * `networkFused` module derived from network.wat): they still match PyTorch, they never reach a
 * trajectory, and curvature readouts use them and say so.
 *
 * Node 20's V8 accepts relaxed SIMD only behind a flag. It is switched on for this file before
 * any module is compiled (the fused module is compiled on first use, per test file) and off
 * again after, so test files that run later in the same worker see the default.
 */
import { setFlagsFromString } from 'v8';
import { readFileSync } from 'fs';
import { join } from 'path';
import { parseSpec } from '../../../src/experiment';
import { buildObjective, initialParameters } from '../../../src/core/assemble';
import { Network } from '../../../src/core/model/network';
import { withWeightDecay } from '../../../src/core/optim/decayed';
import { measureCurvature } from '../../../src/core/probe/curvature';
import { Rng } from '../../../src/core/rng';
import { decodeBase64 } from '../../../src/core/wasm/load';
import { networkFused } from '../../../src/core/wasm/binaries';
import type { Experiment } from '../../../src/core/setup';
import { relErr } from '../compare';

setFlagsFromString('--experimental-wasm-relaxed-simd');
afterAll(() => setFlagsFromString('--no-experimental-wasm-relaxed-simd'));

interface NetCase {
  name: string;
  P: number;
  spec: unknown;
  v: number[];
  hv: number[];
  gnv: number[];
}
const cases = (JSON.parse(readFileSync(join(__dirname, 'golden.json'), 'utf8')) as { cases: NetCase[] }).cases;

function experimentOf(spec: unknown): Experiment {
  const parsed = parseSpec(JSON.stringify(spec));
  if (!parsed.ok) throw new Error(`spec rejected: ${JSON.stringify(parsed.errors)}`);
  return parsed.experiment;
}

function build(c: NetCase): { f: Network; w: Float64Array } {
  const setup = experimentOf(c.spec).setup;
  return { f: buildObjective(setup) as Network, w: initialParameters(setup, Rng.fromSeed(1).fork('init')) };
}

it('the fused module is valid WebAssembly with relaxed SIMD (this engine runs it here)', () => {
  expect(WebAssembly.validate(decodeBase64(networkFused))).toBe(true);
  expect(build(cases[0]).f.fusedProducts).toBe(true);
});

// source: PyTorch 1.13 autograd, float64 (test/reference/model/make_golden.py), as golden.test.ts
describe.each(cases.map((c) => [c.name, c] as const))('network %s, fused products', (_name, c) => {
  it('H·v and G·v match torch to 1e-9 relative', () => {
    const { f, w } = build(c);
    const out = new Float64Array(c.P);
    f.hvp(w, Float64Array.from(c.v), out, undefined, true);
    expect(relErr(out, c.hv)).toBeLessThanOrEqual(1e-9);
    f.gnvp(w, Float64Array.from(c.v), out, undefined, true);
    expect(relErr(out, c.gnv)).toBeLessThanOrEqual(1e-9);
  });
});

it('fuse for real: some product differs from the unfused one in its last bits', () => {
  let differing = 0;
  for (const c of cases) {
    const { f, w } = build(c);
    const a = new Float64Array(c.P);
    const b = new Float64Array(c.P);
    f.hvp(w, Float64Array.from(c.v), a);
    f.hvp(w, Float64Array.from(c.v), b, undefined, true);
    if (a.some((x, i) => x !== b[i])) differing++;
  }
  expect(differing).toBeGreaterThan(0);
});

it('leave the kept passes alone: unfused products and gradients after fused ones have the bits of a network that never fused', () => {
  for (const c of cases) {
    const { f, w } = build(c);
    const fresh = build(c).f;
    const v = Float64Array.from(c.v);
    const fusedOut = new Float64Array(c.P);
    const after = new Float64Array(c.P);
    const clean = new Float64Array(c.P);
    // Same weights and rows: the second product reuses the pass the first one kept.
    f.hvp(w, v, fusedOut, undefined, true);
    f.hvp(w, v, after);
    fresh.hvp(w, v, clean);
    expect(Array.from(after)).toEqual(Array.from(clean));
    f.gnvp(w, v, fusedOut, undefined, true);
    f.gnvp(w, v, after);
    fresh.gnvp(w, v, clean);
    expect(Array.from(after)).toEqual(Array.from(clean));
    expect(f.gradient(w, after)).toBe(fresh.gradient(w, clean));
    expect(Array.from(after)).toEqual(Array.from(clean));
  }
});

it('pass through weight decay', () => {
  const c = cases[0];
  const { f, w } = build(c);
  const decayed = withWeightDecay(f, 0.01);
  expect(decayed.fusedProducts).toBe(true);
  const a = new Float64Array(c.P);
  const b = new Float64Array(c.P);
  decayed.hvp(w, Float64Array.from(c.v), a, undefined, true);
  f.hvp(w, Float64Array.from(c.v), b, undefined, true);
  for (let i = 0; i < c.P; i++) b[i] += 0.01 * c.v[i];
  expect(Array.from(a)).toEqual(Array.from(b));
});

describe('a matrix-free curvature readout', () => {
  // The largest golden network, on the matrix-free path (its P is below the dense limit).
  const c = cases.reduce((a, b) => (b.P > a.P ? b : a));
  const experiment = experimentOf(c.spec);
  const measure = (fused: boolean | undefined, simd = true) => {
    const f = new Network(experiment.setup.model as never, experiment.setup.data!, experiment.setup.loss, experiment.setup.l2, { simd, lossExpression: experiment.setup.lossExpression });
    const w = initialParameters(experiment.setup, Rng.fromSeed(1).fork('init'));
    return measureCurvature(f, w, experiment.recipe, Rng.fromSeed(7), { method: 'lanczos', k: 3, fused, density: { probes: 2, steps: 12 }, traceProbes: 4 });
  };

  it('fuses by default, says so, and agrees with the unfused readout within its error bounds', () => {
    const fused = measure(undefined);
    const plain = measure(false);
    expect(fused.fused).toBe(true);
    expect(plain.fused).toBeUndefined();
    const a = fused.spectrum;
    const b = plain.spectrum;
    // common practice: two runs of one solver agree within the sum of their reported error bounds
    // (here plus 1e-12 relative, the rounding of products that differ in their last bits).
    const scale = Math.abs(b.top[0]);
    a.top.forEach((x, i) => expect(Math.abs(x - b.top[i])).toBeLessThanOrEqual(a.topBounds[i] + b.topBounds[i] + 1e-12 * scale));
    a.bottom.forEach((x, i) => expect(Math.abs(x - b.bottom[i])).toBeLessThanOrEqual(a.bottomBounds[i] + b.bottomBounds[i] + 1e-12 * scale));
    // common practice: the same probes through products that agree to ~1e-11 relative give traces
    // that agree about as closely; 1e-9 leaves room.
    expect(Math.abs(a.trace!.value - b.trace!.value)).toBeLessThanOrEqual(1e-9 * Math.abs(b.trace!.value));
  });

  it('without SIMD (the plain-JavaScript kernels) nothing fuses and the readout carries no mark', () => {
    const r = measure(undefined, false);
    expect(r.fused).toBeUndefined();
    const plain = measure(false);
    expect(r.spectrum.top).toEqual(plain.spectrum.top);
    expect(r.spectrum.bottom).toEqual(plain.spectrum.bottom);
  });
});
