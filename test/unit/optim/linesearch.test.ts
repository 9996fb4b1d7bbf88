/**
 * One-dimensional line searches against scipy.optimize (golden JSON made by
 * test/reference/linesearch/make_golden.py) and against published facts of the methods.
 */
import golden from '../../reference/linesearch/golden.json';
import wolfeGolden from '../../reference/linesearch/wolfe-golden.json';
import { bracketMinimum, brentMinimize, goldenSection, minimizeAlong, strongWolfe, type Bracket, GOLDEN_RATIO } from '../../../src/core/optim/linesearch';
import { TestQuadratic, TestRosenbrock } from './fixtures';

const F: Record<string, (x: number) => number> = {
  'shifted-square': (x) => (x - 1) ** 2,
  'x-exp': (x) => -x * Math.exp(-x),
  'sin-sin': (x) => Math.sin(x) + Math.sin((10 * x) / 3),
  'poly-exp': (x) => -(16 * x * x - 24 * x + 5) * Math.exp(-x),
  'x-sin-gauss': (x) => -(x + Math.sin(x)) * Math.exp(-x * x)
};

function bracketOf(f: (x: number) => number, [a, b, c]: number[]): Bracket {
  return { a, b, c, fa: f(a), fb: f(b), fc: f(c), evaluations: 3 };
}

// x tolerance 1e-8 relative to max(1, |x|): near a minimum f changes by only ½f''(Δx)², so
// below about √(ε|f|/f'') ≈ 1e-8 the minimizer is not determined by float64 values at all
// (common practice; Press et al., Numerical Recipes §10.1) and libm differences decide.
type Row = [string, number, number, number, number]; // name, tol, x, f, tol used for x
const brentRows: Row[] = [];
const goldenRows: Row[] = [];
for (const c of golden.cases) {
  for (const r of c.brent) brentRows.push([c.name, r.tol, r.x, r.f, 1e-8 * Math.max(1, Math.abs(r.x))]);
  // golden section stops when its bracket is below tol·(|x1| + |x2|) ≈ 2·tol·|x|: the answer is
  // only defined to that width (source: scipy.optimize.golden stopping rule, scipy 1.10.1)
  for (const r of c.golden) goldenRows.push([c.name, r.tol, r.x, r.f, Math.max(1e-8 * Math.max(1, Math.abs(r.x)), 2 * r.tol * Math.abs(r.x))]);
}

describe('Brent and golden section against scipy.optimize (scipy 1.10.1)', () => {
  // source: scipy.optimize.brent / golden, scipy 1.10.1 (test/reference/linesearch/golden.json)
  it.each(brentRows)('brent %s tol %p → x = %p', (name, tol, x, fx, xTol) => {
    const f = F[name];
    const c = golden.cases.find((k) => k.name === name);
    const res = brentMinimize(f, bracketOf(f, c?.bracket ?? []), { tol });
    expect(Math.abs(res.step - x)).toBeLessThan(xTol);
    expect(Math.abs(res.value - fx)).toBeLessThan(1e-12);
  });

  it.each(goldenRows)('golden %s tol %p → x = %p', (name, tol, x, fx, xTol) => {
    const f = F[name];
    const c = golden.cases.find((k) => k.name === name);
    const res = goldenSection(f, bracketOf(f, c?.bracket ?? []), { tol });
    expect(Math.abs(res.step - x)).toBeLessThan(xTol);
    expect(Math.abs(res.value - fx)).toBeLessThan(1e-12);
  });

  it.each(golden.cases.map((c) => [c.name, c] as const))('bracket %s from the same start pair as scipy.optimize.bracket', (name, c) => {
    const f = F[name];
    const br = bracketMinimum(f, c.start[0], c.start[1]);
    expect(br.a).toBeLessThan(br.b);
    expect(br.b).toBeLessThan(br.c);
    expect(br.fb).toBeLessThanOrEqual(br.fa);
    expect(br.fb).toBeLessThanOrEqual(br.fc);
    // both brackets must contain scipy's brent minimizer
    const xMin = c.brent[1].x;
    expect(br.a).toBeLessThan(xMin);
    expect(br.c).toBeGreaterThan(xMin);
    const s = c.scipyBracket;
    expect(Math.min(s.a, s.c)).toBeLessThan(xMin);
    expect(Math.max(s.a, s.c)).toBeGreaterThan(xMin);
  });

  it('Brent needs fewer evaluations than golden section on smooth functions', () => {
    // source: Brent 1973 ch. 5 (superlinear parabolic steps vs linear 0.618 contraction)
    for (const c of golden.cases) {
      const f = F[c.name];
      const b = brentMinimize(f, bracketOf(f, c.bracket), { tol: 1e-10 });
      const g = goldenSection(f, bracketOf(f, c.bracket), { tol: 1e-10 });
      expect(b.evaluations).toBeLessThan(g.evaluations);
    }
  });
});

describe('golden-section contraction', () => {
  // source: Brent 1973; Press et al., Numerical Recipes 3rd ed. §10.2: bracket × 1/φ ≈ 0.618034 per evaluation
  it('from a golden-proportioned bracket every evaluation shrinks it by 0.618034', () => {
    const f = F['sin-sin'];
    const widths: number[] = [];
    const b = 4.5 + ((3 - Math.sqrt(5)) / 2) * 1.5; // interior point at fraction 0.381966 of [4.5, 6]
    goldenSection(f, bracketOf(f, [4.5, b, 6.0]), { tol: 1e-9, widths });
    expect(widths.length).toBeGreaterThan(20);
    expect(widths[0] / 1.5).toBeCloseTo(1 / GOLDEN_RATIO, 9);
    for (let k = 1; k < widths.length; k++) expect(widths[k] / widths[k - 1]).toBeCloseTo(1 / GOLDEN_RATIO, 6);
  });

  it('from an arbitrary bracket the ratio settles to 0.618034 within four evaluations', () => {
    const f = F['sin-sin'];
    const widths: number[] = [];
    goldenSection(f, bracketOf(f, [4.5, 5.2, 6.0]), { tol: 1e-9, widths });
    for (let k = 4; k < widths.length; k++) expect(widths[k] / widths[k - 1]).toBeCloseTo(1 / GOLDEN_RATIO, 6);
  });
});

describe('strong Wolfe (Nocedal & Wright alg. 3.5/3.6)', () => {
  const rosen = new TestRosenbrock();
  const cases: [string, number[], number[], number][] = [
    ['steepest descent at (−1.2, 1), α0 = 1', [-1.2, 1], [215.6, 88], 1],
    ['steepest descent at (−1.2, 1), α0 = 1e-4', [-1.2, 1], [215.6, 88], 1e-4],
    ['Newton-like direction at (0, 0)', [0, 0], [1, 0], 1]
  ];
  it.each(cases)('%s: accepted step satisfies both conditions with c1 = 1e-4, c2 = 0.9', (_n, w0, dirNeg, t0) => {
    const w = Float64Array.from(w0);
    const g = new Float64Array(2);
    const f0 = rosen.gradient(w, g);
    const d = _n.startsWith('steepest') ? Float64Array.from(g, (x) => -x) : Float64Array.from(dirNeg);
    const pt = new Float64Array(2);
    const gt = new Float64Array(2);
    const phi = (a: number) => {
      pt[0] = w[0] + a * d[0];
      pt[1] = w[1] + a * d[1];
      const v = rosen.gradient(pt, gt);
      return { value: v, slope: gt[0] * d[0] + gt[1] * d[1] };
    };
    const g0 = g[0] * d[0] + g[1] * d[1];
    const r = strongWolfe(phi, f0, g0, t0);
    expect(r.satisfied).toBe(true);
    const at = phi(r.step);
    // source: Nocedal & Wright 2006, eq. 3.7 (strong Wolfe conditions)
    expect(at.value).toBeLessThanOrEqual(f0 + 1e-4 * r.step * g0);
    expect(Math.abs(at.slope)).toBeLessThanOrEqual(0.9 * Math.abs(g0));
    expect(r.evaluations).toBeLessThanOrEqual(25);
  });

  it('refuses an ascent direction with a clear message', () => {
    expect(() => strongWolfe(() => ({ value: 0, slope: 0 }), 0, 1, 1)).toThrow('strong-Wolfe search needs a descent direction (φ′(0) < 0), got φ′(0) = 1');
  });
});

describe('minimizeAlong', () => {
  // common practice: on a quadratic the exact minimizer along d is α* = −gᵀd / dᵀAd
  const q = new TestQuadratic([[3, 1], [1, 2]], [1, -1]);
  const w = Float64Array.of(0, 0);
  const g = new Float64Array(2);
  q.gradient(w, g);
  const d = Float64Array.of(-g[0], -g[1]);
  const ad = new Float64Array(2);
  q.hvp(w, d, ad);
  const exact = -(g[0] * d[0] + g[1] * d[1]) / (d[0] * ad[0] + d[1] * ad[1]);
  it.each(['brent', 'golden'] as const)('%s finds the exact step on a quadratic to 1e-7 relative', (method) => {
    const r = minimizeAlong(q, w, d, { method, initialStep: 0.01, tol: 1e-10 });
    expect(Math.abs(r.step - exact) / exact).toBeLessThan(1e-7);
    expect(r.evaluations).toBeGreaterThan(3);
  });
  it('strong-wolfe gives an acceptable step', () => {
    const r = minimizeAlong(q, w, d, { method: 'strong-wolfe' });
    expect(r.value).toBeLessThan(q.value(w));
  });
  it('rejects a mismatched direction', () => {
    expect(() => minimizeAlong(q, w, Float64Array.of(1))).toThrow('minimizeAlong needs w and direction of length 2, got 2 and 1');
  });
});

describe('strong Wolfe against torch.optim.lbfgs._strong_wolfe (PyTorch 1.13, float64)', () => {
  // source: PyTorch 1.13 torch.optim.lbfgs._strong_wolfe on Rosenbrock
  // (test/reference/linesearch/make_wolfe_golden.py → wolfe-golden.json)
  const rosen = new TestRosenbrock();
  it.each(wolfeGolden.cases.map((c) => [`start (${c.start.join(', ')}), α0 = ${c.t0}`, c] as const))('%s', (_n, c) => {
    const w = Float64Array.from(c.start);
    const d = Float64Array.from(c.direction);
    const pt = new Float64Array(2);
    const gt = new Float64Array(2);
    const phi = (a: number) => {
      for (let i = 0; i < 2; i++) pt[i] = w[i] + a * d[i];
      const v = rosen.gradient(pt, gt);
      return { value: v, slope: gt[0] * d[0] + gt[1] * d[1] };
    };
    const dmax = Math.max(Math.abs(d[0]), Math.abs(d[1]));
    const r = strongWolfe(phi, c.f0, c.g0, c.t0, { c1: 1e-4, c2: 0.9, maxEvaluations: 25, minWidth: 1e-9 / dmax });
    expect(Math.abs(r.step - c.step)).toBeLessThanOrEqual(1e-12 * Math.abs(c.step));
    expect(Math.abs(r.value - c.value)).toBeLessThanOrEqual(1e-12 * Math.abs(c.value));
    expect(r.evaluations).toBe(c.evaluations);
  });
});
