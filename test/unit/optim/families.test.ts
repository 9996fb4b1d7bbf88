/** Per-family properties with outside sources: formulas of the published methods. */
import { Session } from '../../../src/core/session';
import type { Recipe } from '../../../src/core/setup';
import type { Objective } from '../../../src/core/objective';
import { experiment, leastSquares, TestQuadratic, TestRosenbrock } from './fixtures';
import { Matrix, solve } from 'ml-matrix';

const quadA = [[5, 1, 0], [1, 3, 0.5], [0, 0.5, 1]];
const quadC = [1, -2, 0.5];
function onQuad(patch: Partial<Recipe>): Session {
  return Session.create(experiment(patch), { objective: new TestQuadratic(quadA, quadC), initial: Float64Array.of(3, 3, 3) });
}

describe('Nesterov momentum: PyTorch form vs the look-ahead form of Sutskever et al. 2013', () => {
  // source: Sutskever, Martens, Dahl & Hinton, ICML 2013: v ← μv − η∇f(w + μv), w ← w + v.
  // With v = −η·buf the PyTorch iterate equals the look-ahead point w + μv (see src/core/optim/sgd.ts).
  it.each([[0.9, 0.05], [0.5, 0.2]])('μ = %p, η = %p: iterates agree to 1e-12 over 100 steps', (mu, lr) => {
    const obj = new TestQuadratic(quadA, quadC);
    const s = Session.create(experiment({ optimizer: 'sgd', lr, momentum: mu, nesterov: true }), { objective: obj, initial: Float64Array.of(3, 3, 3) });
    const w = Float64Array.of(3, 3, 3);
    const v = new Float64Array(3);
    const look = new Float64Array(3);
    const g = new Float64Array(3);
    for (let k = 0; k < 100; k++) {
      for (let i = 0; i < 3; i++) look[i] = w[i] + mu * v[i];
      obj.gradient(look, g);
      for (let i = 0; i < 3; i++) {
        v[i] = mu * v[i] - lr * g[i];
        w[i] += v[i];
      }
      s.step();
      for (let i = 0; i < 3; i++) expect(Math.abs(s.parameters[i] - (w[i] + mu * v[i]))).toBeLessThan(1e-12);
    }
  });
});

describe('Adam family', () => {
  it('AdamW with a zero gradient shrinks w by exactly (1 − ηλ) per step (decoupled decay)', () => {
    // source: Loshchilov & Hutter, ICLR 2019, alg. 2 (decay applied to w, not to the gradient)
    const zero = new TestQuadratic([[0, 0], [0, 0]], [0, 0]);
    const s = Session.create(experiment({ optimizer: 'adamw', lr: 0.1, weightDecay: 0.3 }), { objective: zero, initial: Float64Array.of(2, -1) });
    s.step(5);
    expect(s.parameters[0]).toBeCloseTo(2 * (1 - 0.03) ** 5, 14);
    expect(s.parameters[1]).toBeCloseTo(-1 * (1 - 0.03) ** 5, 14);
  });

  it('coupled weight decay in Adam is not the same as AdamW', () => {
    // source: Loshchilov & Hutter, ICLR 2019 (the two differ for adaptive methods)
    const a = onQuad({ optimizer: 'adam', lr: 0.05, weightDecay: 0.1 });
    const b = onQuad({ optimizer: 'adamw', lr: 0.05, weightDecay: 0.1 });
    a.step(20);
    b.step(20);
    expect(Math.abs(a.parameters[0] - b.parameters[0])).toBeGreaterThan(1e-4);
  });

  it('the first Adam step has size η per coordinate (bias correction), whatever the gradient scale', () => {
    // source: Kingma & Ba, ICLR 2015, §2.1 (|Δ| ≈ η at t = 1 since m̂/√v̂ = g/|g|)
    for (const scale of [1e-3, 1, 1e3]) {
      const obj = new TestQuadratic([[scale, 0], [0, 2 * scale]], [0, 0]);
      const s = Session.create(experiment({ optimizer: 'adam', lr: 0.01, eps: 1e-12 }), { objective: obj, initial: Float64Array.of(1, -1) });
      s.step();
      expect(s.parameters[0]).toBeCloseTo(0.99, 8);
      expect(s.parameters[1]).toBeCloseTo(-0.99, 8);
    }
  });

  it('AMSGrad keeps a non-decreasing second-moment maximum', () => {
    // source: Reddi, Kale & Kumar, ICLR 2018 (v̂_t = max(v̂_{t−1}, v_t))
    const s = Session.create(experiment({ optimizer: 'adam', lr: 0.01, amsgrad: true, beta2: 0.9 }), { objective: new TestRosenbrock(), initial: Float64Array.of(-1.2, 1) });
    let prev = s.optimizerState().buffers.vMax;
    for (let k = 0; k < 50; k++) {
      s.step();
      const cur = s.optimizerState().buffers.vMax;
      for (let i = 0; i < 2; i++) expect(cur[i]).toBeGreaterThanOrEqual(prev[i]);
      expect(cur[0]).toBeGreaterThanOrEqual(s.optimizerState().buffers.v[0]);
      prev = cur;
    }
  });
});

describe('Adagrad and RMSProp', () => {
  it('Adagrad’s first step is η·sign(g) per coordinate', () => {
    // source: Duchi, Hazan & Singer, JMLR 2011 (s = g² after one step, so g/√s = sign g)
    const s = onQuad({ optimizer: 'adagrad', lr: 0.1, eps: 0 });
    const g = new Float64Array(3);
    new TestQuadratic(quadA, quadC).gradient(Float64Array.of(3, 3, 3), g);
    s.step();
    for (let i = 0; i < 3; i++) expect(s.parameters[i]).toBeCloseTo(3 - 0.1 * Math.sign(g[i]), 14);
  });

  it('RMSProp’s first step is η·g/(√(1−α)|g|) (plain) and centered divides by √((1−α)α)|g|', () => {
    // source: torch.optim.RMSprop documentation (PyTorch 1.13): v = α v + (1 − α) g², centered subtracts the mean²
    const g = new Float64Array(3);
    new TestQuadratic(quadA, quadC).gradient(Float64Array.of(3, 3, 3), g);
    const plain = onQuad({ optimizer: 'rmsprop', lr: 0.01, alpha: 0.9, eps: 0 });
    plain.step();
    const centered = onQuad({ optimizer: 'rmsprop', lr: 0.01, alpha: 0.9, eps: 0, centered: true });
    centered.step();
    for (let i = 0; i < 3; i++) {
      expect(plain.parameters[i]).toBeCloseTo(3 - (0.01 * Math.sign(g[i])) / Math.sqrt(0.1), 13);
      expect(centered.parameters[i]).toBeCloseTo(3 - (0.01 * Math.sign(g[i])) / Math.sqrt(0.1 - 0.01), 13);
    }
  });
});

describe('Newton and Gauss-Newton', () => {
  it('Gauss-Newton with λ = 0 solves linear least squares in one step (normal equations)', () => {
    // common practice: for linear residuals G = H = XᵀX/n, so one GN step lands on the solution of XᵀXw = Xᵀy
    const data = leastSquares(30, 4);
    const s = Session.create(experiment({ optimizer: 'gauss-newton', lr: 1, damping: 0, lineSearch: 'none' }), { objective: data, initial: new Float64Array(4) });
    s.step();
    const X = new Matrix(Array.from({ length: 30 }, (_, r) => Array.from(data.x.subarray(r * 4, r * 4 + 4))));
    const y = Matrix.columnVector(Array.from(data.y));
    const w = solve(X.transpose().mmul(X), X.transpose().mmul(y));
    for (let i = 0; i < 4; i++) expect(s.parameters[i]).toBeCloseTo(w.get(i, 0), 10);
  });

  it('an indefinite Hessian raises the damping until Cholesky succeeds and the step still descends', () => {
    // source: Rosenbrock Hessian at (0, 1): [[2 − 400, 0], [0, 200]] is indefinite (Levenberg 1944 damping)
    const s = Session.create(experiment({ optimizer: 'newton', lr: 1, damping: 1e-3 }), { objective: new TestRosenbrock(), initial: Float64Array.of(0, 1) });
    const f0 = s.fullLoss();
    const [r] = s.step();
    expect(r.loss).toBeLessThan(f0);
    expect(s.optimizerState().scalars.lambda).toBeGreaterThan(398 / 10);
    expect(r.evaluations).toBeGreaterThan(2);
  });

  it('refuses models with more than 2000 parameters', () => {
    const big = leastSquares(3, 2001);
    expect(() => Session.create(experiment({ optimizer: 'newton' }), { objective: big, initial: new Float64Array(2001) })).toThrow(
      "optimizer 'newton' builds the dense 2001 × 2001 curvature matrix; this model has P = 2001 parameters, the limit is 2000. Use 'lbfgs' or 'cg' instead."
    );
  });
});

describe('batch families with weight decay minimize f + ½λ‖w‖² (ridge regression)', () => {
  // common practice: the minimizer of 1/(2n)‖Xw − y‖² + ½λ‖w‖² solves (XᵀX/n + λI)w = Xᵀy/n
  const data = leastSquares(30, 4);
  const X = new Matrix(Array.from({ length: 30 }, (_, r) => Array.from(data.x.subarray(r * 4, r * 4 + 4))));
  const y = Matrix.columnVector(Array.from(data.y));
  const lambda = 0.5;
  const ridge = solve(X.transpose().mmul(X).div(30).add(Matrix.eye(4).mul(lambda)), X.transpose().mmul(y).div(30));
  it.each<[string, Partial<Recipe>, number]>([
    // torch's tolerance_change (1e-9) stops L-BFGS once |gᵀd| is that small, before 1e-6 agreement here
    ['lbfgs', { optimizer: 'lbfgs', lr: 1, toleranceChange: 1e-15 }, 40],
    ['cg', { optimizer: 'cg', lr: 1 }, 40],
    ['newton', { optimizer: 'newton', lr: 1, damping: 0 }, 3],
    ['sgd (coupled decay in the gradient)', { optimizer: 'sgd', lr: 0.5 }, 3000]
  ])('%s reaches the ridge solution', (_n, patch, steps) => {
    const s = Session.create(experiment({ ...patch, weightDecay: lambda }), { objective: data, initial: new Float64Array(4) });
    s.step(steps);
    // L-BFGS stops once max|g| ≤ 1e-7 (torch's tolerance_grad), so agreement is to ~1e-7
    for (let i = 0; i < 4; i++) expect(s.parameters[i]).toBeCloseTo(ridge.get(i, 0), 6);
  });
});

describe('mini-batch L-BFGS', () => {
  it('each step solves its own mini-batch; over epochs the weights approach the full least-squares solution', () => {
    // common practice: a solve on a batch of 10 of 40 rows lands near (not on) the full solution
    const data = leastSquares(40, 3);
    const X = new Matrix(Array.from({ length: 40 }, (_, r) => Array.from(data.x.subarray(r * 3, r * 3 + 3))));
    const w = solve(X.transpose().mmul(X), X.transpose().mmul(Matrix.columnVector(Array.from(data.y))));
    const s = Session.create(experiment({ optimizer: 'minibatch-lbfgs', lr: 1, batch: 10, innerSteps: 5 }), { objective: data, initial: new Float64Array(3) });
    const [r] = s.step();
    expect(r.evaluations).toBeGreaterThan(5);
    s.step(7);
    for (let i = 0; i < 3; i++) expect(Math.abs(s.parameters[i] - w.get(i, 0))).toBeLessThan(0.1);
  });
});

describe('restore continues bit for bit for every family', () => {
  it.each<[string, Partial<Recipe>]>([
    ['lbfgs', { optimizer: 'lbfgs', lr: 1, history: 3 }],
    ['lbfgs brent', { optimizer: 'lbfgs', lr: 1, lineSearch: 'brent' }],
    ['cg', { optimizer: 'cg', lr: 1 }],
    ['newton', { optimizer: 'newton', lr: 1 }],
    ['gauss-newton', { optimizer: 'gauss-newton', lr: 1 }],
    ['minibatch-lbfgs', { optimizer: 'minibatch-lbfgs', lr: 1, batch: 5 }],
    ['rmsprop centered momentum', { optimizer: 'rmsprop', lr: 0.001, centered: true, momentum: 0.9 }],
    ['adagrad', { optimizer: 'adagrad', lr: 0.1 }],
    ['adamw amsgrad', { optimizer: 'adamw', lr: 0.01, amsgrad: true, weightDecay: 0.01 }]
  ])('%s', (_n, patch) => {
    const data = leastSquares(20, 3);
    const a = Session.create(experiment(patch), { objective: data, initial: new Float64Array(3).fill(0.5) });
    a.step(4);
    const b = Session.restore(a.experiment, a.state(), { objective: data });
    a.step(5);
    b.step(5);
    expect(b.fingerprint()).toBe(a.fingerprint());
  });
});

describe('batch families at a non-finite point', () => {
  // common practice: a NaN loss must be visible in the record, not crash the step
  const nan: Objective = {
    parameterCount: 2, rowCount: 0, blocks: [{ name: 'x', layer: -1, kind: 'param', offset: 0, size: 2, shape: [2] }],
    value: () => NaN,
    gradient: (_w, out) => { out.fill(NaN); return NaN; },
    hvp: (_w, _v, out) => { out.fill(NaN); },
    gnvp: (_w, _v, out) => { out.fill(NaN); }
  };
  it.each<[string, Partial<Recipe>]>([
    ['lbfgs', { optimizer: 'lbfgs', lr: 1 }],
    ['cg', { optimizer: 'cg', lr: 1 }],
    ['newton', { optimizer: 'newton', lr: 1 }],
    ['minibatch-lbfgs', { optimizer: 'minibatch-lbfgs', lr: 1 }]
  ])('%s stays in place and records NaN; runUntil reports diverged', (_n, patch) => {
    const s = Session.create(experiment(patch), { objective: nan, initial: Float64Array.of(1, 2) });
    const [r] = s.step();
    expect(Number.isNaN(r.loss)).toBe(true);
    expect(Array.from(s.parameters)).toEqual([1, 2]);
    expect(s.runUntil({ kind: 'steps', count: 5 }, 5).reason).toBe('diverged');
  });
});
