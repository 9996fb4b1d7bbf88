import { lanczosExtremes } from '../../../src/core/linalg/lanczos';
import { eigenvalues } from '../../../src/core/linalg/symmetric-eigen';
import { Rng } from '../../../src/core/rng';
import { graded, matvec, randomSymmetric, repeated, spiked, wilkinson } from '../../reference/curvature/fixtures';

const cases: [string, number, () => Float64Array][] = [
  ['spiked indefinite n=300', 300, () => spiked(300, 21)],
  ['graded indefinite n=400', 400, () => graded(400, 22)],
  ['random symmetric n=150 (semicircle, slow ends)', 150, () => randomSymmetric(150, 5)],
  ['Wilkinson W21+ (near-equal pairs)', 21, () => wilkinson(21)],
];

describe('lanczosExtremes against the dense solver', () => {
  // source: the dense Householder + QL solver of this package, itself checked against numpy.linalg.eigvalsh
  // (eigen.golden.test.ts); tolerance 1e-8 relative as the product requirement states.
  it.each(cases)('%s: top-5 and bottom-5 agree with the dense spectrum, bounds hold', (_name, n, make) => {
    const a = make();
    const all = eigenvalues(a, n);
    const r = lanczosExtremes(matvec(a, n), n, Rng.fromSeed(101), { k: 5, which: 'both', vectors: true });
    expect(['converged', 'exhausted']).toContain(r.stop);
    for (let i = 0; i < 5; i++) {
      const top = all[n - 1 - i];
      const bottom = all[i];
      expect(Math.abs(r.largest[i].value - top)).toBeLessThanOrEqual(1e-8 * Math.abs(top));
      expect(Math.abs(r.smallest[i].value - bottom)).toBeLessThanOrEqual(1e-8 * Math.abs(bottom));
      // source: Golub & Van Loan 4th ed., §10.1.4 — |θ − λ| ≤ ‖Az − θz‖ = |β_m s_{m,i}| (Weyl).
      expect(Math.abs(r.largest[i].value - top)).toBeLessThanOrEqual(r.largest[i].residual + 1e-13 * r.scale);
      // The Ritz vector's actual residual equals the cheap bound |β_m s_{m,i}|.
      const z = r.largest[i].vector as Float64Array;
      const az = new Float64Array(n);
      matvec(a, n)(z, az);
      let res = 0;
      for (let j = 0; j < n; j++) res += (az[j] - r.largest[i].value * z[j]) ** 2;
      expect(Math.sqrt(res)).toBeLessThan(r.largest[i].residual + 1e-10 * r.scale);
    }
    expect(r.products).toBe(r.iterations);
  });

  it('stops early on an easy spectrum (well separated top eigenvalues)', () => {
    const r = lanczosExtremes(matvec(spiked(300, 21), 300), 300, Rng.fromSeed(7), { k: 3 });
    expect(r.stop).toBe('converged');
    expect(r.iterations).toBeLessThan(100);
    expect(r.smallest).toEqual([]);
  });

  it('is deterministic for a seed', () => {
    const a = graded(400, 22);
    const r1 = lanczosExtremes(matvec(a, 400), 400, Rng.fromSeed(5), { k: 2 });
    const r2 = lanczosExtremes(matvec(a, 400), 400, Rng.fromSeed(5), { k: 2 });
    expect(r1.largest.map((p) => p.value)).toEqual(r2.largest.map((p) => p.value));
    expect(r1.iterations).toBe(r2.iterations);
  });

  it('exhausts a tiny space and returns exact values (n = 2)', () => {
    // from memory: eigenvalues of [[2,1],[1,3]] are (5 ± √5)/2.
    const a = Float64Array.from([2, 1, 1, 3]);
    const r = lanczosExtremes(matvec(a, 2), 2, Rng.fromSeed(1), { k: 5, which: 'both' });
    expect(r.stop).toBe('exhausted');
    expect(r.largest.length).toBe(2);
    expect(r.largest[0].value).toBeCloseTo((5 + Math.sqrt(5)) / 2, 13);
    expect(r.smallest[0].value).toBeCloseTo((5 - Math.sqrt(5)) / 2, 13);
  });

  it('restarts on an invariant subspace and finds a second copy of a repeated top eigenvalue', () => {
    // A diagonal matrix with eigenvalue 5 twice: a single Krylov space holds only one copy.
    const n = 30;
    const a = new Float64Array(n * n);
    for (let i = 0; i < n; i++) a[i * n + i] = i < 2 ? 5 : i / n;
    const r = lanczosExtremes(matvec(a, n), n, Rng.fromSeed(2), { k: 2 });
    expect(r.largest[0].value).toBeCloseTo(5, 12);
    expect(r.largest[1].value).toBeCloseTo(5, 12);
  });

  it('fails with an exact message when the operator returns NaN', () => {
    expect(() => lanczosExtremes((_v, out) => out.fill(NaN), 10, Rng.fromSeed(1))).toThrow(
      'the operator returned a non-finite product at Lanczos step 1 (NaN or ±Infinity); the weights may have diverged'
    );
  });

  it('stops after one product on the zero operator', () => {
    const r = lanczosExtremes((_v, out) => out.fill(0), 1000, Rng.fromSeed(1), { k: 3, which: 'both' });
    expect(r.stop).toBe('converged');
    expect(r.products).toBe(1);
    expect(r.largest[0].value).toBe(0);
  });

  it('reports progress every step and cancels when the callback returns false or shouldStop is set', () => {
    const a = randomSymmetric(150, 5);
    const seen: number[] = [];
    const r = lanczosExtremes(matvec(a, 150), 150, Rng.fromSeed(3), {
      k: 5,
      onProgress: (p) => {
        seen.push(p.done);
        return p.done < 10;
      },
    });
    expect(r.stop).toBe('cancelled');
    expect(r.iterations).toBe(10);
    expect(seen).toEqual([1, 2, 3, 4, 5, 6, 7, 8, 9, 10]);
    let calls = 0;
    const r2 = lanczosExtremes(matvec(a, 150), 150, Rng.fromSeed(3), { shouldStop: () => ++calls > 4 });
    expect(r2.stop).toBe('cancelled');
    expect(r2.iterations).toBe(4);
    expect(r2.largest[0].converged).toBe(false);
  });

  it('rejects bad options with exact messages', () => {
    const op = matvec(repeated(60, 16), 60);
    expect(() => lanczosExtremes(op, 60, Rng.fromSeed(1), { k: 0 })).toThrow('k must be a positive integer, got 0');
    expect(() => lanczosExtremes(op, 60, Rng.fromSeed(1), { tol: -1 })).toThrow('tol must be positive, got -1');
    expect(() => lanczosExtremes(op, 0, Rng.fromSeed(1))).toThrow();
  });
});

describe('lanczosExtremes with the eigenvalue criterion', () => {
  /** A diagonal operator: its eigenvalues are its entries (closed form). */
  function diagonal(d: Float64Array): (v: Float64Array, out: Float64Array) => void {
    return (v, out) => {
      for (let i = 0; i < d.length; i++) out[i] = d[i] * v[i];
    };
  }

  it.each(cases)('%s: every value within tol·scale of the dense spectrum, in no more steps than the residual criterion', (_name, n, make) => {
    const a = make();
    const all = eigenvalues(a, n);
    const tol = 1e-10;
    const byValue = lanczosExtremes(matvec(a, n), n, Rng.fromSeed(101), { k: 5, which: 'both', tol, criterion: 'eigenvalue' });
    const byResidual = lanczosExtremes(matvec(a, n), n, Rng.fromSeed(101), { k: 5, which: 'both', tol });
    expect(['converged', 'exhausted']).toContain(byValue.stop);
    expect(byValue.criterion).toBe('eigenvalue');
    expect(byValue.iterations).toBeLessThanOrEqual(byResidual.iterations);
    // source: the dense solver of this package (checked against numpy.linalg.eigvalsh in
    // eigen.golden.test.ts); 1e-13·scale is its own rounding (common practice: O(n·ε·‖A‖)).
    const pairs = [...byValue.largest.map((p, i) => [p, all[n - 1 - i]] as const), ...byValue.smallest.map((p, i) => [p, all[i]] as const)];
    for (const [p, exact] of pairs) {
      expect(p.converged).toBe(true);
      if (byValue.stop === 'exhausted') continue;
      expect(p.errorBound).toBeLessThanOrEqual(tol * byValue.scale);
      expect(p.residual).toBeLessThanOrEqual(Math.sqrt(tol) * byValue.scale);
      expect(Math.abs(p.value - exact)).toBeLessThanOrEqual(tol * byValue.scale + 1e-13 * byValue.scale);
    }
  });

  it('stops sooner on a clustered end and still finds the cluster to tol·scale (diagonal operator, exact eigenvalues)', () => {
    // A spectrum shaped like a network Hessian's: a few separated top values, a bulk near zero and
    // ten negative values 0.01 apart. Invented; the eigenvalues of a diagonal matrix are its entries.
    const n = 1000;
    const d = new Float64Array(n);
    for (let i = 0; i < n; i++) d[i] = i < 10 ? -0.46 + 0.01 * i : -0.1 + 0.4 * (i / n);
    d[n - 1] = 6.5;
    d[n - 2] = 5.9;
    d[n - 3] = 5.6;
    const sorted = Float64Array.from(d).sort();
    const tol = 1e-10;
    const byValue = lanczosExtremes(diagonal(d), n, Rng.fromSeed(9), { k: 5, which: 'both', tol, criterion: 'eigenvalue' });
    const byResidual = lanczosExtremes(diagonal(d), n, Rng.fromSeed(9), { k: 5, which: 'both', tol });
    expect(byValue.stop).toBe('converged');
    expect(byResidual.stop).toBe('converged');
    expect(byValue.iterations).toBeLessThan(0.9 * byResidual.iterations);
    for (let i = 0; i < 5; i++) {
      expect(Math.abs(byValue.smallest[i].value - sorted[i])).toBeLessThanOrEqual(tol * byValue.scale);
      expect(Math.abs(byValue.largest[i].value - sorted[n - 1 - i])).toBeLessThanOrEqual(tol * byValue.scale);
      // The bound shown covers the true error.
      expect(Math.abs(byValue.smallest[i].value - sorted[i])).toBeLessThanOrEqual(byValue.smallest[i].errorBound + 1e-15 * byValue.scale);
    }
  });
});
