/**
 * The exact trace of a network's curvature without operator products (`Network.exactTrace`):
 * the Gauss-Newton trace of every network, the Hessian trace of networks whose activations are
 * all piecewise linear, null where it would not be exact.
 */
import { readFileSync } from 'fs';
import { join } from 'path';
import { parseSpec } from '../../../src/experiment';
import { buildObjective, initialParameters } from '../../../src/core/assemble';
import { Network } from '../../../src/core/model/network';
import { withWeightDecay } from '../../../src/core/optim/decayed';
import { Rng } from '../../../src/core/rng';

interface NetCase {
  name: string;
  P: number;
  spec: { model: { layers: { activation: string }[] } };
  v: number[];
  hessianEigenvalues?: number[];
  gnEigenvalues?: number[];
  batches?: { rows: number[] }[];
}
const cases = (JSON.parse(readFileSync(join(__dirname, 'golden.json'), 'utf8')) as { cases: NetCase[] }).cases;
const PIECEWISE_LINEAR = new Set(['relu', 'leaky-relu', 'linear']);
const piecewiseLinear = (c: NetCase): boolean => c.spec.model.layers.every((l) => PIECEWISE_LINEAR.has(l.activation));

function build(c: NetCase, simd = true): { f: Network; w: Float64Array } {
  const parsed = parseSpec(JSON.stringify(c.spec));
  if (!parsed.ok) throw new Error(`spec rejected: ${JSON.stringify(parsed.errors)}`);
  const setup = parsed.experiment.setup;
  if (setup.model.kind !== 'network' || setup.data === undefined) throw new Error(`${c.name} is not a network with data`);
  const f = simd ? (buildObjective(setup) as Network) : new Network(setup.model, setup.data, setup.loss, setup.l2, { simd: false });
  return { f, w: initialParameters(setup, Rng.fromSeed(1).fork('init')) };
}

const sum = (xs: number[]): number => xs.reduce((a, b) => a + b, 0);
const absSum = (xs: number[]): number => xs.reduce((a, b) => a + Math.abs(b), 0);

/** Σ_i e_iᵀ M e_i from the engine's own products (checked against torch in golden.test.ts). */
function traceByProducts(f: Network, w: Float64Array, kind: 'hessian' | 'gauss-newton', rows?: Int32Array): number {
  const e = new Float64Array(f.parameterCount);
  const out = new Float64Array(f.parameterCount);
  let t = 0;
  for (let i = 0; i < f.parameterCount; i++) {
    e[i] = 1;
    if (kind === 'hessian') f.hvp(w, e, out, rows);
    else f.gnvp(w, e, out, rows);
    t += out[i];
    e[i] = 0;
  }
  return t;
}

// source: PyTorch 1.13 autograd, float64 (test/reference/model/make_golden.py): the trace is the
// sum of torch.linalg.eigvalsh's eigenvalues of the dense Hessian / Gauss-Newton matrix (from
// memory: tr M = Σ λ_i). Tolerance 1e-11 of Σ|λ|: the rounding of a sum of 5–90 eigenvalues
// each good to about 1e-13·max|λ| (common practice: a backward-stable solver's O(n·ε·‖M‖)).
describe.each(cases.filter((c) => c.gnEigenvalues !== undefined).map((c) => [c.name, c] as const))('network %s', (_name, c) => {
  it('Gauss-Newton trace equals the sum of torch’s Gauss-Newton eigenvalues', () => {
    const { f, w } = build(c);
    const g = c.gnEigenvalues as number[];
    const t = f.exactTrace(w, 'gauss-newton');
    expect(t).not.toBeNull();
    expect(Math.abs((t as number) - sum(g))).toBeLessThanOrEqual(1e-11 * absSum(g));
  });

  it(piecewiseLinear(c) ? 'Hessian trace equals the sum of torch’s Hessian eigenvalues' : 'Hessian trace is not given (an activation is curved)', () => {
    const { f, w } = build(c);
    const t = f.exactTrace(w, 'hessian');
    if (!piecewiseLinear(c)) {
      expect(t).toBeNull();
      return;
    }
    const h = c.hessianEigenvalues as number[];
    expect(Math.abs((t as number) - sum(h))).toBeLessThanOrEqual(1e-11 * absSum(h));
  });
});

describe('exact trace, beyond the full-batch goldens', () => {
  it('on a row subset it is the trace of the subset’s curvature (deep-tanh-relu-ce-l2, P = 387; relu-ce-2h-l2)', () => {
    for (const name of ['deep-tanh-relu-ce-l2', 'relu-ce-2h-l2']) {
      const c = cases.find((x) => x.name === name) as NetCase;
      const { f, w } = build(c);
      const rows = Int32Array.from((c.batches as { rows: number[] }[])[0].rows);
      for (const kind of piecewiseLinear(c) ? (['hessian', 'gauss-newton'] as const) : (['gauss-newton'] as const)) {
        const byProducts = traceByProducts(f, w, kind, rows);
        const t = f.exactTrace(w, kind, rows) as number;
        // common practice: two summation orders of the same P terms agree to about P·ε·Σ|terms|.
        expect(Math.abs(t - byProducts)).toBeLessThanOrEqual(1e-12 * c.P * Math.max(1, Math.abs(byProducts)));
      }
    }
  });

  it('the plain-JavaScript kernels give the same bits as the WebAssembly ones', () => {
    for (const c of cases) {
      const a = build(c, true);
      const b = build(c, false);
      expect(b.f.kernelKind).toBe('scalar');
      expect(b.f.exactTrace(b.w, 'gauss-newton')).toBe(a.f.exactTrace(a.w, 'gauss-newton'));
    }
  });

  it('leaves later products unchanged: a Hessian product after it has the bits of a network that never traced', () => {
    const c = cases.find((x) => x.name === 'relu-ce-2h-l2') as NetCase;
    const { f, w } = build(c);
    const fresh = build(c).f;
    const v = Float64Array.from(c.v);
    const a = new Float64Array(c.P);
    const b = new Float64Array(c.P);
    f.hvp(w, v, a);
    f.exactTrace(w, 'hessian');
    f.hvp(w, v, a);
    fresh.hvp(w, v, b);
    expect(Array.from(a)).toEqual(Array.from(b));
  });

  it('weight decay adds λ per decayed entry (from memory: tr(M + λD) = tr M + λ·tr D)', () => {
    const c = cases.find((x) => x.name === 'relu-ce-2h-l2') as NetCase;
    const { f, w } = build(c);
    const base = f.exactTrace(w, 'hessian') as number;
    expect(withWeightDecay(f, 0.1).exactTrace?.(w, 'hessian')).toBeCloseTo(base + 0.1 * c.P, 12);
    const mask = new Uint8Array(c.P);
    mask.fill(1, 0, 10);
    expect(withWeightDecay(f, 0.1, mask).exactTrace?.(w, 'hessian')).toBeCloseTo(base + 0.1 * 10, 12);
    const curved = cases.find((x) => x.name === 'tanh-ce-3h') as NetCase;
    const t = build(curved);
    expect(withWeightDecay(t.f, 0.1).exactTrace?.(t.w, 'hessian')).toBeNull();
  });
});
