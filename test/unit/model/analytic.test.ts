import { Quadratic, Rosenbrock } from '../../../src/core/model/analytic';

function denseHessian(obj: Rosenbrock | Quadratic, w: Float64Array): number[][] {
  const P = obj.parameterCount;
  return Array.from({ length: P }, (_, j) => {
    const e = new Float64Array(P); e[j] = 1;
    const col = new Float64Array(P);
    obj.hvp(w, e, col);
    return Array.from(col);
  });
}

describe('Rosenbrock', () => {
  const f = new Rosenbrock(2);
  it('has f = 24.2 at the classic start (−1.2, 1) and 0 with zero gradient at (1, 1)', () => {
    // source: Rosenbrock 1960; Nocedal & Wright, Numerical Optimization, 2nd ed., 2006, §2
    expect(f.value(Float64Array.of(-1.2, 1))).toBeCloseTo(24.2, 12);
    const g = new Float64Array(2);
    expect(f.gradient(Float64Array.of(1, 1), g)).toBe(0);
    expect(Array.from(g)).toEqual([0, 0]);
  });
  it('has the published Hessian [[802, −400], [−400, 200]] at the minimum', () => {
    // source: Nocedal & Wright 2006, §2 (Rosenbrock Hessian at x* = (1, 1))
    expect(denseHessian(f, Float64Array.of(1, 1))).toEqual([[802, -400], [-400, 200]]);
    // source: CHECKS.md, eigenvalues 501 ± √250601 (= 1001.600639… and 0.399361…; the
    // rounded decimals printed there, 1001.6004 / 0.3996, are off in the fourth place).
    const [[a, b], [, d]] = denseHessian(f, Float64Array.of(1, 1));
    const mid = (a + d) / 2, rad = Math.sqrt(((a - d) / 2) ** 2 + b * b);
    expect(mid + rad).toBeCloseTo(501 + Math.sqrt(250601), 10);
    expect(mid - rad).toBeCloseTo(501 - Math.sqrt(250601), 10);
  });
  it('has a gradient that matches central differences at the classic start', () => {
    const w = Float64Array.of(-1.2, 1);
    const g = new Float64Array(2);
    f.gradient(w, g);
    // source: Nocedal & Wright 2006: ∇f = (−400x(y − x²) − 2(1 − x), 200(y − x²)) = (−215.6, −88) at (−1.2, 1)
    expect(g[0]).toBeCloseTo(-215.6, 10);
    expect(g[1]).toBeCloseTo(-88, 10);
  });
  it('Gauss-Newton product equals 2JᵀJ of the residual form at the minimum (where residuals vanish it equals H)', () => {
    const w = Float64Array.of(1, 1);
    const e = Float64Array.of(0.3, -0.7);
    const gn = new Float64Array(2), hv = new Float64Array(2);
    f.gnvp(w, e, gn);
    f.hvp(w, e, hv);
    // common practice: H = 2JᵀJ + 2Σ r_i ∇²r_i and r = 0 at the minimum.
    expect(gn[0]).toBeCloseTo(hv[0], 12);
    expect(gn[1]).toBeCloseTo(hv[1], 12);
  });
});

describe('quadratic: gradient descent step-size rules', () => {
  const c = 4;
  const q = new Quadratic([[c]], [0]);
  function run(eta: number, steps: number): number[] {
    const w = Float64Array.of(1);
    const g = new Float64Array(1);
    const xs = [w[0]];
    for (let k = 0; k < steps; k++) { q.gradient(w, g); w[0] -= eta * g[0]; xs.push(w[0]); }
    return xs;
  }
  // source: Nocedal & Wright 2006 ch. 3 / CHECKS.md: w ← (1 − ηc)w converges iff 0 < η < 2/c
  it('η = 1/c reaches the minimum in one step', () => {
    expect(run(1 / c, 1)[1]).toBe(0);
  });
  it('η < 1/c converges monotonically', () => {
    const xs = run(0.5 / c, 30);
    expect(xs.every((x, i) => i === 0 || (x > 0 && x < xs[i - 1]))).toBe(true);
  });
  it('1/c < η < 2/c oscillates in sign and converges', () => {
    const xs = run(1.5 / c, 40);
    expect(xs.slice(1, 6).map(Math.sign)).toEqual([-1, 1, -1, 1, -1]);
    expect(Math.abs(xs[40])).toBeLessThan(1e-10);
  });
  it('η > 2/c diverges', () => {
    const xs = run(2.1 / c, 60);
    expect(Math.abs(xs[60])).toBeGreaterThan(100);
  });
  it('value and gradient are ½(w−c)ᵀA(w−c) and A(w−c)', () => {
    const q2 = new Quadratic([[2, 1], [1, 3]], [1, -1]);
    const w = Float64Array.of(2, 1);
    const g = new Float64Array(2);
    // common practice (definition): r = (1, 2), Ar = (4, 7), ½ rᵀAr = 9
    expect(q2.gradient(w, g)).toBe(9);
    expect(Array.from(g)).toEqual([4, 7]);
  });
});
