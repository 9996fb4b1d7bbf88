/**
 * The dense eigen-solver's WebAssembly kernels, one at a time, against plain loops that do the
 * same operations in the same order. IEEE 754 rounds each multiply and each subtraction alone
 * (no fused multiply-add in these kernels), so the same order must give the same bits: the
 * kernels' blocking and packing may change only speed, never a readout kept in a notebook.
 */
import { eigenSpace, syr2kWork } from '../../../src/core/linalg/eigen-kernels';
import { panelSize, tridiagonalForm } from '../../../src/core/linalg/householder';
import { eigenvalues } from '../../../src/core/linalg/symmetric-eigen';
import { tridiagonalQL } from '../../../src/core/linalg/tridiagonal';
import { Rng } from '../../../src/core/rng';

/** Offsets (doubles) of a packed lower triangle of m rows, `count` rows of X and of Y (stride `stride`), and scratch. */
function layout(m: number, count: number, stride: number) {
  const tri = (m * (m + 1)) / 2;
  return { tri, x: tri, y: tri + count * stride, work: tri + 2 * count * stride, length: tri + 2 * count * stride + syr2kWork(m, count) };
}

describe('syr2k (the rank-2k update of a packed lower triangle)', () => {
  // Orders around the 3-row and 6-column tiles' edges, and term counts of a partial panel, a full one (2·32) and one.
  const shapes: [number, number][] = [
    [1, 1], [2, 3], [3, 2], [4, 64], [5, 7], [6, 1], [7, 5], [8, 64], [11, 13], [12, 2], [13, 64], [37, 9], [100, 64], [203, 17],
  ];
  it.each(shapes)('m = %d, %d terms: each entry loses its terms one by one, k ascending, bit for bit', (m, count) => {
    expect(shapes).toHaveLength(14);
    const stride = m + 3; // rows of X and Y longer than m, as in the solver (stride n, update of the leading block)
    const lay = layout(m, count, stride);
    const space = eigenSpace(lay.length, stride);
    expect(space.kernels.kind).toBe('simd');
    const rng = Rng.fromSeed(1000 + m * 7 + count);
    const m0 = space.m;
    for (let i = 0; i < lay.work; i++) m0[i] = rng.normal();
    const before = Float64Array.from(m0.subarray(0, lay.work));
    space.kernels.syr2k(0, m, lay.x, lay.y, stride, count, lay.work);
    // common practice (no single source): IEEE 754 rounds each operation alone, so the update
    // c ← c − X[k, r]·Y[k, j] for k = 0, 1, … in a plain loop is the exact expected value.
    let checked = 0;
    for (let r = 0; r < m; r++) {
      for (let j = 0; j <= r; j++) {
        let c = before[(r * (r + 1)) / 2 + j];
        for (let k = 0; k < count; k++) c -= before[lay.y + k * stride + j] * before[lay.x + k * stride + r];
        expect(m0[(r * (r + 1)) / 2 + j]).toBe(c);
        checked++;
      }
    }
    expect(checked).toBe(lay.tri);
    // X and Y are read, not written.
    for (let i = lay.x; i < lay.work; i++) expect(m0[i]).toBe(before[i]);
  });

  it('the scalar kernel agrees with the SIMD one to rounding (its sums are formed first)', () => {
    const m = 41;
    const count = 10;
    const stride = m;
    const lay = layout(m, count, stride);
    const fast = eigenSpace(lay.length, stride);
    const rng = Rng.fromSeed(77);
    for (let i = 0; i < lay.work; i++) fast.m[i] = rng.normal();
    const slow = eigenSpace(lay.length, stride, false);
    slow.m.set(fast.m.subarray(0, lay.work));
    fast.kernels.syr2k(0, m, lay.x, lay.y, stride, count, lay.work);
    slow.kernels.syr2k(0, m, lay.x, lay.y, stride, count, lay.work);
    expect(slow.kernels.kind).toBe('scalar');
    // common practice (no single source): a sum of 10 products of standard normals reordered
    // differs by a few units of its largest partial sum's last place; 1e-13 leaves room.
    for (let i = 0; i < lay.tri; i++) expect(Math.abs(fast.m[i] - slow.m[i])).toBeLessThan(1e-13);
  });
});

describe('large orders (panels of 48 from n = 1 000)', () => {
  /**
   * A dense symmetric matrix with a known spectrum: H·D·H with D = diag(d) and the Householder
   * reflector H = I − 2vvᵀ/(vᵀv), built in O(n²) as D − v·wᵀ − w·vᵀ with w = 2Dv/s − 2(vᵀDv)v/s², s = vᵀv.
   */
  function reflectedDiagonal(d: Float64Array, seed: number): Float64Array {
    const n = d.length;
    const rng = Rng.fromSeed(seed);
    const v = Float64Array.from({ length: n }, () => rng.normal());
    let s = 0;
    let vdv = 0;
    for (let i = 0; i < n; i++) {
      s += v[i] * v[i];
      vdv += v[i] * d[i] * v[i];
    }
    const w = Float64Array.from(v, (vi, i) => (2 * d[i] * vi) / s - (2 * vdv * vi) / (s * s));
    const a = new Float64Array(n * n);
    for (let i = 0; i < n; i++) {
      for (let j = 0; j < n; j++) a[i * n + j] = (i === j ? d[i] : 0) - v[i] * w[j] - w[i] * v[j];
    }
    return a;
  }

  it('switches to panels of 48 at n = 1 000', () => {
    expect(panelSize(999)).toBe(32);
    expect(panelSize(1000)).toBe(48);
  });

  it('n = 1 000: the spectrum of H·D·H is D', () => {
    const n = 1000;
    const d = Float64Array.from({ length: n }, (_, k) => Math.cos((Math.PI * (k + 0.5)) / n) * (1 + (k % 7) / 10));
    const got = eigenvalues(reflectedDiagonal(d, 5), n);
    const want = Float64Array.from(d).sort();
    expect(got).toHaveLength(n);
    // source: Golub & Van Loan, Matrix Computations, 4th ed., §5.1.2 and §7.1 (a Householder
    // reflector is orthogonal; similarity keeps eigenvalues); tolerance 1e-12·max|λ| as the
    // LAPACK golden tests (backward-error scale of a stable solver, common practice).
    for (let k = 0; k < n; k++) expect(Math.abs(got[k] - want[k])).toBeLessThan(1e-12 * 1.6);
  });

  it('n = 1 000: the default and explicit panels of 48 give the same bits; panels of 32 agree to rounding', () => {
    const n = 1000;
    const a = reflectedDiagonal(Float64Array.from({ length: n }, (_, k) => (k - 500) / 250), 6);
    const byDefault = tridiagonalForm(a, n);
    const explicit = tridiagonalForm(a, n, { block: 48 });
    expect(Array.from(byDefault.diagonal)).toEqual(Array.from(explicit.diagonal));
    expect(Array.from(byDefault.subdiagonal)).toEqual(Array.from(explicit.subdiagonal));
    const v48 = tridiagonalQL(byDefault);
    const v32 = tridiagonalQL(tridiagonalForm(a, n, { block: 32 }));
    expect(v48).toHaveLength(n);
    // common practice (no single source): two backward-stable reductions differ by O(n·ε·‖A‖).
    for (let k = 0; k < n; k++) expect(Math.abs(v48[k] - v32[k])).toBeLessThan(1e-12 * 2);
  });
});
