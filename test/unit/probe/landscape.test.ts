/**
 * The line and plane readouts on a quadratic f(w) = ½(w − c)ᵀA(w − c) with a chosen spectrum,
 * against closed forms: f(w + t·d) = f(w) + t·gᵀd + ½t²·dᵀAd exactly, minimum at
 * t* = −gᵀd / dᵀAd, eigenvectors of A = QΛQᵀ the columns of Q.
 * (source: second-order Taylor expansion, exact for a quadratic; Nocedal & Wright 2006, §2.1)
 */
import { Quadratic } from '../../../src/core/model/analytic';
import { Rng } from '../../../src/core/rng';
import { lineReadout } from '../../../src/core/probe/line';
import { filterNormalizedDirection, projectOntoPlane, topEigendirections } from '../../../src/core/probe/directions';
import { planeDirections, planeReadout } from '../../../src/core/probe/slice';
import { lineAt, peekUpdate } from '../../../src/core/probe/readouts-at';
import { Session } from '../../../src/core/session/live';
import { parseSpec, formatSpecError } from '../../../src/experiment';
import { networkBlocks } from '../../../src/core/model/network';

const SPECTRUM = [10, 3, 1, 0.1];
const V = [1, 2, -1, 0.5];

/** Householder reflection Q = I − 2vvᵀ/vᵀv (orthogonal and symmetric). */
function householder(v: number[]): number[][] {
  const s = v.reduce((a, x) => a + x * x, 0);
  return v.map((vi, i) => v.map((vj, j) => (i === j ? 1 : 0) - (2 * vi * vj) / s));
}
const Q = householder(V);
const A = Q.map((_, i) => Q.map((_, j) => SPECTRUM.reduce((s, l, k) => s + Q[i][k] * l * Q[j][k], 0)));
const C = [0.3, -0.2, 0.5, 0.1];
const column = (k: number): Float64Array => Float64Array.from(Q.map((row) => row[k]));

function matVec(m: number[][], x: ArrayLike<number>): number[] {
  return m.map((row) => row.reduce((s, a, j) => s + a * x[j], 0));
}
const dotN = (a: ArrayLike<number>, b: ArrayLike<number>): number => Array.from(a).reduce((s, x, i) => s + x * b[i], 0);
/** f(x) = ½(x − c)ᵀA(x − c), computed here independently of core's Quadratic. */
function f(x: ArrayLike<number>): number {
  const r = Array.from(x, (xi, i) => xi - C[i]);
  return 0.5 * dotN(r, matVec(A, r));
}
function grad(x: ArrayLike<number>): number[] {
  return matVec(A, Array.from(x, (xi, i) => xi - C[i]));
}

describe('line readout on a quadratic with spectrum 10, 3, 1, 0.1', () => {
  const q = new Quadratic(A, C);
  const w = Float64Array.of(1, -1, 0.5, 2);
  const lr = 0.15;
  const g = grad(w);
  const step = Float64Array.from(g, (x) => -lr * x);
  const top = { value: SPECTRUM[0], vector: column(0) };
  const r = lineReadout(q, w, 0, step, top, { points: 31 });

  it('the update line is f(w + tΔw) and its quadratic model is exact', () => {
    expect(r.update.t.length).toBe(31);
    expect(r.update.t[0]).toBeCloseTo(-0.5, 15);
    expect(r.update.t[30]).toBeCloseTo(2.5, 14);
    r.update.t.forEach((t, i) => {
      const expected = f(Array.from(w, (x, k) => x + t * step[k]));
      expect(Math.abs(r.update.loss[i] - expected)).toBeLessThan(1e-12 * Math.max(1, expected));
      expect(Math.abs(r.update.quadratic[i] - expected)).toBeLessThan(1e-12 * Math.max(1, expected));
    });
    expect(r.update.stepAt).toBe(1);
    expect(r.update.slope).toBeCloseTo(dotN(g, step), 12);
    expect(r.update.curvature).toBeCloseTo(dotN(step, matVec(A, step)), 12);
  });

  it("Brent's minimum on the update line is −gᵀΔw/ΔwᵀAΔw, the quadratic model's own minimum", () => {
    const tStar = -dotN(g, step) / dotN(step, matVec(A, step));
    expect(r.update.minimum.t).not.toBeNull();
    // source: scipy.optimize.brent's default xtol 1.48e-8 (relative) bounds the error of the abscissa
    expect(Math.abs((r.update.minimum.t as number) - tStar)).toBeLessThan(1e-6 * Math.max(1, tStar));
    expect(r.update.quadraticMinimum).toBeCloseTo(tStar, 12);
    expect(r.update.minimum.loss).toBeCloseTo(f(Array.from(w, (x, k) => x + tStar * step[k])), 12);
  });

  it('the eigenvector line has curvature λmax = 10, slope gᵀq₁, and places the step at Δw·q₁', () => {
    const e = r.eigenvector!;
    expect(e.eigenvalue).toBe(10);
    expect(e.curvature).toBeCloseTo(10, 12);
    expect(e.slope).toBeCloseTo(dotN(g, column(0)), 12);
    expect(e.stepAt).toBeCloseTo(dotN(step, column(0)), 14);
    expect(e.minimum.t).toBeCloseTo(-dotN(g, column(0)) / 10, 6);
  });

  it('Lanczos finds the top two eigenvectors ±q₁, ±q₂ with eigenvalues 10 and 3', () => {
    const top2 = topEigendirections(q, w, 2, Rng.fromSeed(3));
    expect(top2.length).toBe(2);
    expect(top2[0].value).toBeCloseTo(10, 10);
    expect(top2[1].value).toBeCloseTo(3, 10);
    expect(Math.abs(dotN(top2[0].vector, column(0)))).toBeCloseTo(1, 10);
    expect(Math.abs(dotN(top2[1].vector, column(1)))).toBeCloseTo(1, 10);
  });

  it('through a session: the next update of SGD is −η∇f, and the line readout follows it', () => {
    const spec = `seed: 2\nmodel: { objective: quadratic, matrix: ${JSON.stringify(A)}, center: ${JSON.stringify(C)}, start: [1, -1, 0.5, 2] }\nrecipe: { optimizer: sgd, lr: ${lr} }\n`;
    const parsed = parseSpec(spec);
    if (!parsed.ok) throw new Error(parsed.errors.map(formatSpecError).join('\n'));
    const s = Session.create(parsed.experiment);
    const fp = s.fingerprint();
    const d = peekUpdate(s);
    expect(d.length).toBe(4);
    d.forEach((x, i) => expect(x).toBeCloseTo(step[i], 14));
    const line = lineAt(s, Rng.fromSeed(2).fork('probe'));
    expect(line.eigenvector?.eigenvalue).toBeCloseTo(10, 10);
    expect(line.update.curvature).toBeCloseTo(dotN(step, matVec(A, step)), 10);
    expect(s.fingerprint()).toBe(fp); // measuring never moves the session
  });
});

describe('plane readout', () => {
  const q = new Quadratic(A, C);
  const w = Float64Array.of(1, -1, 0.5, 2);

  it('over the top two eigenvectors the grid is f(w) + αg·q₁ + βg·q₂ + ½(10α² + 3β²)', () => {
    const d = planeDirections(q, w, 'eigenvectors', Rng.fromSeed(4));
    expect(d.eigenvalues?.[0]).toBeCloseTo(10, 10);
    const r = planeReadout(q, w, 0, 'eigenvectors', d, { steps: [], weights: [] }, { points: 5, span: 0.5 })!;
    expect(r.loss.length).toBe(5);
    const g = grad(w);
    const g1 = dotN(g, d.d1);
    const g2 = dotN(g, d.d2);
    for (let j = 0; j < 5; j++) {
      expect(r.loss[j].length).toBe(5);
      for (let i = 0; i < 5; i++) {
        const a = r.alpha[i];
        const b = r.beta[j];
        const expected = f(w) + a * g1 + b * g2 + 0.5 * (10 * a * a + 3 * b * b);
        expect(Math.abs(r.loss[j][i] - expected)).toBeLessThan(1e-10);
      }
    }
  });

  it('over random directions the grid is f at w + αd₁ + βd₂, and a path in the plane projects back to its coordinates', () => {
    const d = planeDirections(q, w, 'random', Rng.fromSeed(5));
    const coords: [number, number][] = [[0.2, -0.4], [-0.7, 0.1], [0, 0]];
    const weights = coords.map(([a, b]) => Float64Array.from(w, (x, k) => x + a * d.d1[k] + b * d.d2[k]));
    const r = planeReadout(q, w, 7, 'random', d, { steps: [1, 2, 3], weights }, { points: 3, span: 1 })!;
    expect(r.loss.length).toBe(3);
    r.loss.forEach((row, j) => row.forEach((v, i) => {
      const x = Array.from(w, (wk, k) => wk + r.alpha[i] * d.d1[k] + r.beta[j] * d.d2[k]);
      expect(Math.abs(v - f(x))).toBeLessThan(1e-12 * Math.max(1, f(x)));
    }));
    expect(r.path.alpha.length).toBe(3);
    coords.forEach(([a, b], i) => {
      expect(r.path.alpha[i]).toBeCloseTo(a, 12);
      expect(r.path.beta[i]).toBeCloseTo(b, 12);
      expect(r.path.offPlane[i]).toBeLessThan(1e-12);
    });
  });

  it('a point off the plane keeps its in-plane coordinates and reports its distance', () => {
    const d1 = Float64Array.of(1, 0, 0, 0);
    const d2 = Float64Array.of(1, 1, 0, 0); // not orthogonal: least squares still recovers (a, b)
    const p = Float64Array.from(w, (x, k) => x + 0.5 * d1[k] - 2 * d2[k] + (k === 3 ? 0.75 : 0));
    const r = projectOntoPlane(w, d1, d2, [p]);
    expect(r.alpha[0]).toBeCloseTo(0.5, 14);
    expect(r.beta[0]).toBeCloseTo(-2, 14);
    expect(r.offPlane[0]).toBeCloseTo(0.75, 14);
  });

  it('filter-normalized directions: each unit\'s incoming weights get the norm of its row of w, biases zero (Li et al. 2018, §4)', () => {
    const blocks = networkBlocks(3, [4, 2]);
    const P = blocks[blocks.length - 1].offset + blocks[blocks.length - 1].size;
    const w = Rng.fromSeed(8).fillNormal(new Float64Array(P));
    const d = filterNormalizedDirection(blocks, w, Rng.fromSeed(9));
    let rowsChecked = 0;
    for (const b of blocks) {
      if (b.kind === 'bias') {
        expect(Array.from(d.subarray(b.offset, b.offset + b.size)).every((x) => x === 0)).toBe(true);
        continue;
      }
      const [rows, cols] = b.shape;
      for (let r = 0; r < rows; r++) {
        const at = b.offset + r * cols;
        const nd = Math.hypot(...d.subarray(at, at + cols));
        const nw = Math.hypot(...w.subarray(at, at + cols));
        expect(nd).toBeCloseTo(nw, 12);
        rowsChecked++;
      }
    }
    expect(rowsChecked).toBe(6);
  });
});

describe('line readout ranges', () => {
  it('--from/--to shape the update line only; the eigenvector line keeps its distance range', () => {
    const q = new Quadratic(A, C);
    const w = Float64Array.of(1, -1, 0.5, 2);
    const step = Float64Array.from(grad(w), (x) => -0.1 * x);
    const r = lineReadout(q, w, 0, step, { value: 10, vector: column(0) }, { from: 0, to: 4, points: 5 });
    expect(r.update.t).toEqual([0, 1, 2, 3, 4]);
    const spread = Math.max(Math.hypot(...step), Math.abs(dotN(step, column(0))));
    expect(r.eigenvector!.t[0]).toBeCloseTo(-2 * spread, 14);
    expect(r.eigenvector!.t[4]).toBeCloseTo(2 * spread, 14);
  });
});
