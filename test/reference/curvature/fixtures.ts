/**
 * Test matrices of the curvature checks, built by the same formulas as make_golden.py (a 32-bit
 * integer hash reproduced bit for bit on both sides), plus small helpers for the tests.
 */
import golden from './golden.json';
import type { Setup } from '../../../src/core/setup';

export { golden };

function mix(x: number): number {
  x = (x ^ (x >>> 15)) >>> 0;
  x = Math.imul(x, 0x2c1b3c6d) >>> 0;
  x = (x ^ (x >>> 12)) >>> 0;
  x = Math.imul(x, 0x297a2d39) >>> 0;
  x = (x ^ (x >>> 15)) >>> 0;
  return x;
}

/** Uniform in [−0.5, 0.5), exactly representable; mirrors `hash_uniform` of make_golden.py. */
export function hashUniform(seed: number, i: number, j: number): number {
  let h = (Math.imul(seed, 0x9e3779b1) + Math.imul(i, 0x85ebca77) + Math.imul(j, 0xc2b2ae3d)) >>> 0;
  h = mix((mix(h) ^ seed) >>> 0);
  return h / 4294967296 - 0.5;
}

/** n×n row-major symmetric matrix with hash entries (make_golden.py `random_symmetric`). */
export function randomSymmetric(n: number, seed: number): Float64Array {
  const a = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j <= i; j++) {
      const v = hashUniform(seed, i, j);
      a[i * n + j] = v;
      a[j * n + i] = v;
    }
  }
  return a;
}

/** C = A·B for n×n row-major matrices. */
export function matmul(a: Float64Array, b: Float64Array, n: number): Float64Array {
  const c = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    for (let k = 0; k < n; k++) {
      const aik = a[i * n + k];
      for (let j = 0; j < n; j++) c[i * n + j] += aik * b[k * n + j];
    }
  }
  return c;
}

export function transpose(a: Float64Array, n: number): Float64Array {
  const t = new Float64Array(n * n);
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) t[j * n + i] = a[i * n + j];
  return t;
}

function reflector(n: number, seed: number): Float64Array {
  const v = Float64Array.from({ length: n }, (_, k) => hashUniform(seed, k, 0));
  let vv = 0;
  for (const x of v) vv += x * x;
  const h = new Float64Array(n * n);
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) h[i * n + j] = (i === j ? 1 : 0) - (2 * v[i] * v[j]) / vv;
  return h;
}

/** The known spectrum of {@link repeated}: 3 (×5), −1 (×4), 0 (×3), then distinct hash values. */
export function repeatedSpectrum(n: number, seed: number): number[] {
  const d: number[] = [];
  for (let k = 0; k < 5; k++) d.push(3);
  for (let k = 0; k < 4; k++) d.push(-1);
  for (let k = 0; k < 3; k++) d.push(0);
  for (let k = 12; k < n; k++) d.push(4 * hashUniform(seed, k, n));
  return d;
}

/** Q·diag(repeatedSpectrum)·Qᵀ with Q a product of two reflectors. */
export function repeated(n: number, seed: number): Float64Array {
  const q = matmul(reflector(n, seed + 1), reflector(n, seed + 2), n);
  const d = repeatedSpectrum(n, seed);
  const qd = new Float64Array(n * n);
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) qd[i * n + j] = q[i * n + j] * d[j];
  return matmul(qd, transpose(q, n), n);
}

export function diagonal(n: number, seed: number): Float64Array {
  const a = new Float64Array(n * n);
  for (let i = 0; i < n; i++) a[i * n + i] = Math.floor(hashUniform(seed, i, 0) * 8) / 2;
  return a;
}

export function tridiagonal(n: number, seed: number): Float64Array {
  const a = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    a[i * n + i] = hashUniform(seed, i, 0);
    if (i > 0) {
      const v = hashUniform(seed, i, 1);
      a[i * n + i - 1] = v;
      a[(i - 1) * n + i] = v;
    }
  }
  return a;
}

/** Wilkinson's W⁺ matrix: diagonal |m − i| with m = (n − 1)/2, unit off-diagonals. */
export function wilkinson(n: number): Float64Array {
  const a = new Float64Array(n * n);
  const m = (n - 1) / 2;
  for (let i = 0; i < n; i++) {
    a[i * n + i] = Math.abs(m - i);
    if (i > 0) {
      a[i * n + i - 1] = 1;
      a[(i - 1) * n + i] = 1;
    }
  }
  return a;
}

/** Narrow random bulk plus five rank-one spikes of both signs (make_golden.py `spiked`). */
export function spiked(n: number, seed: number): Float64Array {
  const a = randomSymmetric(n, seed);
  const s = 0.25 * Math.sqrt(12 / n);
  for (let i = 0; i < a.length; i++) a[i] *= s;
  [40, 25, 12, -15, -6].forEach((c, k) => {
    const x = Float64Array.from({ length: n }, (_, i) => hashUniform(seed + 10 + k, i, 0));
    let xx = 0;
    for (const v of x) xx += v * v;
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) a[i * n + j] += (c * x[i] * x[j]) / xx;
  });
  return a;
}

/** Random symmetric matrix plus a graded diagonal from −3 to 5 (make_golden.py `graded`). */
export function graded(n: number, seed: number): Float64Array {
  const a = randomSymmetric(n, seed);
  const s = 0.3 * Math.sqrt(12 / n);
  for (let i = 0; i < a.length; i++) a[i] *= s;
  for (let i = 0; i < n; i++) a[i * n + i] += -3 + 8 * (i / (n - 1)) ** 2;
  return a;
}

/** The dense cases of golden.json by name. */
export const DENSE_CASES: Record<string, () => Float64Array> = {
  'random-1': () => randomSymmetric(1, 11),
  'random-2': () => randomSymmetric(2, 12),
  'random-3': () => randomSymmetric(3, 13),
  'random-50': () => randomSymmetric(50, 14),
  'random-200': () => randomSymmetric(200, 15),
  'repeated-60': () => repeated(60, 16),
  'diagonal-40': () => diagonal(40, 17),
  'tridiagonal-80': () => tridiagonal(80, 18),
  'wilkinson-21': () => wilkinson(21),
};

/** The matrices of golden.json's `extreme` section by name. */
export const EXTREME_CASES: Record<string, () => Float64Array> = {
  'spiked-300': () => spiked(300, 21),
  'graded-400': () => graded(400, 22),
};

/** y = A·x for an n×n row-major matrix (the test's matrix-vector callback). */
export function matvec(a: Float64Array, n: number): (v: Float64Array, out: Float64Array) => void {
  return (v, out) => {
    for (let i = 0; i < n; i++) {
      let s = 0;
      const off = i * n;
      for (let j = 0; j < n; j++) s += a[off + j] * v[j];
      out[i] = s;
    }
  };
}

/** max |x − y| / max(|y|, floor) over paired entries. */
export function maxRelativeError(x: ArrayLike<number>, y: ArrayLike<number>, floor = 1e-300): number {
  let m = 0;
  for (let i = 0; i < y.length; i++) m = Math.max(m, Math.abs(x[i] - y[i]) / Math.max(Math.abs(y[i]), floor));
  return m;
}

/**
 * The cross-entropy network of make_golden.py `ce_network_case` (8-24-24-3 tanh, softmax
 * cross-entropy, 60 rows), rebuilt from the hash: the setup and the flat weights.
 */
export function crossEntropyNetwork(): { setup: Setup; w: Float64Array } {
  const sizes = [8, 24, 24, 3];
  const rows = 60;
  const x = new Float64Array(rows * sizes[0]);
  for (let r = 0; r < rows; r++) for (let c = 0; c < sizes[0]; c++) x[r * sizes[0] + c] = 2 * hashUniform(61, r, c);
  const y = Float64Array.from({ length: rows }, (_, r) => Math.floor(3 * (hashUniform(62, r, 0) + 0.5)));
  const flat: number[] = [];
  for (let l = 0; l + 1 < sizes.length; l++) {
    const fanIn = sizes[l];
    const fanOut = sizes[l + 1];
    const bound = Math.sqrt(3 / fanIn) * 2;
    for (let o = 0; o < fanOut; o++) for (let i = 0; i < fanIn; i++) flat.push(bound * hashUniform(70 + l, o, i));
    for (let o = 0; o < fanOut; o++) flat.push(0.2 * hashUniform(80 + l, o, 0));
  }
  const setup: Setup = {
    model: {
      kind: 'network',
      inputs: sizes[0],
      layers: [
        { units: 24, activation: 'tanh' },
        { units: 24, activation: 'tanh' },
        { units: 3, activation: 'linear' },
      ],
      init: 'lecun-normal',
      gain: 1,
    },
    data: { rows, inputs: sizes[0], targets: 1, x, y },
    loss: 'cross-entropy',
    l2: 0,
  };
  return { setup, w: Float64Array.from(flat) };
}
