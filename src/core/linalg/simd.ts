/**
 * WebAssembly SIMD (f64x2) kernels for the O(n³) loops of the dense eigen-solver,
 * hand-assembled from the instruction encoding of the WebAssembly core
 * specification 2.0 (§5, binary format; SIMD opcodes 0xFD-prefixed).
 *
 * `fused(a, pu, pq, cu, p, r, ur, qr, vr)` works on byte addresses into the module's memory; for
 * j < r it computes x = a[j] − (ur·pq[j] + qr·pu[j]), stores it to a[j], adds x·vr to p[j], and
 * returns Σ x·cu[j] — the fused rank-2 update and symmetric product of `householder.ts`, two
 * lanes at a time. Every operation is IEEE-754 double arithmetic (no fused multiply-add), so
 * results are deterministic; only the summation order differs from the scalar path.
 *
 * `sweep` runs `fused` over all rows of one reduction step inside WebAssembly (one JS call per
 * step instead of one per row, which alone made the reduction about 1.5× faster).
 *
 * `rot` applies a Givens rotation to two contiguous rows (the QL eigenvector accumulation of
 * `tridiagonal.ts`), `rotSweep` all rotations of one QL sweep in one call, and `reflect` one
 * Householder reflection to one vector (the back-transform of
 * `householder.ts`).
 *
 * When the engine lacks WebAssembly SIMD, {@link simdKernel} returns null and callers use the
 * scalar TypeScript loop.
 */

/** The instantiated kernel and its memory. */
export interface SimdKernel {
  readonly memory: WebAssembly.Memory;
  readonly fused: (a: number, pu: number, pq: number, cu: number, p: number, r: number, ur: number, qr: number, vr: number) => number;
  /**
   * One whole fused sweep of `householder.ts` step 3 over rows r < i of the row-major matrix at `a`
   * (row stride `stride` bytes): `fused` on each row, then its diagonal and p[r] — no JS call per row.
   */
  readonly sweep: (a: number, stride: number, pu: number, pq: number, cu: number, p: number, i: number) => void;
  /** For k < len: (a[k], b[k]) ← (c·a[k] − s·b[k], s·a[k] + c·b[k]) (a Givens rotation of two rows). */
  readonly rot: (a: number, b: number, len: number, c: number, s: number) => void;
  /**
   * The rotations of one QL sweep, deferred and applied together: for i = hi down to lo,
   * `rot` on rows i and i+1 (row stride `stride` bytes, `cols` entries) with c[i], s[i].
   */
  readonly rotSweep: (z: number, stride: number, cols: number, c: number, s: number, lo: number, hi: number) => void;
  /** v ← v − u·(uᵀv)/h over len entries (one Householder reflection of one vector). */
  readonly reflect: (u: number, v: number, len: number, h: number) => void;
}

const V = 0xfd; // SIMD prefix
const LOAD = [V, 0x00, 0x03, 0x00]; // v128.load align=8 offset=0
const STORE = [V, 0x0b, 0x03, 0x00]; // v128.store
const SPLAT = [V, 0x14]; // f64x2.splat
const ADD = [V, 0xf0, 0x01]; // f64x2.add
const SUB = [V, 0xf1, 0x01]; // f64x2.sub
const MUL = [V, 0xf2, 0x01]; // f64x2.mul
const get = (i: number): number[] => [0x20, i];
const set = (i: number): number[] => [0x21, i];
const F64_LOAD = [0x2b, 0x03, 0x00];
const F64_STORE = [0x39, 0x03, 0x00];
const I32_ADD = [0x6a];
const F64_ADD = [0xa0];
const F64_SUB = [0xa1];
const F64_MUL = [0xa2];
// params: 0 a, 1 pu, 2 pq, 3 cu, 4 p, 5 r (i32); 6 ur, 7 qr, 8 vr (f64)
// locals: 9 off, 10 end (i32); 11 s, 12 x, 13 U, 14 Q, 15 V (v128); 16 t (f64)
const at = (base: number): number[] => [...get(base), ...get(9), ...I32_ADD];

const BODY: number[] = [
  ...get(6), ...SPLAT, ...set(13),
  ...get(7), ...SPLAT, ...set(14),
  ...get(8), ...SPLAT, ...set(15),
  // end = (r & −2) << 3
  ...get(5), 0x41, 0x7e, 0x71, 0x41, 0x03, 0x74, ...set(10),
  0x02, 0x40, 0x03, 0x40,
  ...get(9), ...get(10), 0x4f, 0x0d, 0x01,
  // x = a − (U·pq + Q·pu)
  ...at(0), ...LOAD,
  ...get(13), ...at(2), ...LOAD, ...MUL,
  ...get(14), ...at(1), ...LOAD, ...MUL,
  ...ADD, ...SUB, ...set(12),
  ...at(0), ...get(12), ...STORE,
  // s += x·cu
  ...get(11), ...get(12), ...at(3), ...LOAD, ...MUL, ...ADD, ...set(11),
  // p += x·V
  ...at(4), ...at(4), ...LOAD, ...get(12), ...get(15), ...MUL, ...ADD, ...STORE,
  ...get(9), 0x41, 0x10, ...I32_ADD, ...set(9),
  0x0c, 0x00,
  0x0b, 0x0b,
  // odd tail
  ...get(5), 0x41, 0x01, 0x71, 0x04, 0x40,
  ...at(0), ...F64_LOAD,
  ...get(6), ...at(2), ...F64_LOAD, ...F64_MUL,
  ...get(7), ...at(1), ...F64_LOAD, ...F64_MUL,
  ...F64_ADD, ...F64_SUB, ...set(16),
  ...at(0), ...get(16), ...F64_STORE,
  ...at(4), ...at(4), ...F64_LOAD, ...get(16), ...get(8), ...F64_MUL, ...F64_ADD, ...F64_STORE,
  ...get(16), ...at(3), ...F64_LOAD, ...F64_MUL, ...set(16),
  0x0b,
  ...get(11), V, 0x21, 0x00, ...get(11), V, 0x21, 0x01, ...F64_ADD, ...get(16), ...F64_ADD,
  0x0b,
];

// rot params: 0 a, 1 b, 2 len (i32); 3 c, 4 s (f64). locals: 5 off, 6 end (i32); 7 C, 8 S, 9 x, 10 y (v128); 11 xs, 12 ys (f64)
const atT = (base: number): number[] => [...get(base), ...get(5), ...I32_ADD];
const ROT_BODY: number[] = [
  ...get(3), ...SPLAT, ...set(7),
  ...get(4), ...SPLAT, ...set(8),
  ...get(2), 0x41, 0x7e, 0x71, 0x41, 0x03, 0x74, ...set(6),
  0x02, 0x40, 0x03, 0x40,
  ...get(5), ...get(6), 0x4f, 0x0d, 0x01,
  ...atT(0), ...LOAD, ...set(9),
  ...atT(1), ...LOAD, ...set(10),
  ...atT(1), ...get(8), ...get(9), ...MUL, ...get(7), ...get(10), ...MUL, ...ADD, ...STORE,
  ...atT(0), ...get(7), ...get(9), ...MUL, ...get(8), ...get(10), ...MUL, ...SUB, ...STORE,
  ...get(5), 0x41, 0x10, ...I32_ADD, ...set(5),
  0x0c, 0x00,
  0x0b, 0x0b,
  ...get(2), 0x41, 0x01, 0x71, 0x04, 0x40,
  ...atT(0), ...F64_LOAD, ...set(11),
  ...atT(1), ...F64_LOAD, ...set(12),
  ...atT(1), ...get(4), ...get(11), ...F64_MUL, ...get(3), ...get(12), ...F64_MUL, ...F64_ADD, ...F64_STORE,
  ...atT(0), ...get(3), ...get(11), ...F64_MUL, ...get(4), ...get(12), ...F64_MUL, ...F64_SUB, ...F64_STORE,
  0x0b,
  0x0b,
];

// reflect params: 0 u, 1 v, 2 len (i32); 3 h (f64). locals: 4 off, 5 end (i32); 6 acc, 7 F (v128); 8 f (f64)
const atF = (base: number): number[] => [...get(base), ...get(4), ...I32_ADD];
const REFLECT_BODY: number[] = [
  ...get(2), 0x41, 0x7e, 0x71, 0x41, 0x03, 0x74, ...set(5),
  0x02, 0x40, 0x03, 0x40,
  ...get(4), ...get(5), 0x4f, 0x0d, 0x01,
  ...get(6), ...atF(0), ...LOAD, ...atF(1), ...LOAD, ...MUL, ...ADD, ...set(6),
  ...get(4), 0x41, 0x10, ...I32_ADD, ...set(4),
  0x0c, 0x00,
  0x0b, 0x0b,
  ...get(6), V, 0x21, 0x00, ...get(6), V, 0x21, 0x01, ...F64_ADD, ...set(8),
  ...get(2), 0x41, 0x01, 0x71, 0x04, 0x40,
  ...get(8), ...atF(0), ...F64_LOAD, ...atF(1), ...F64_LOAD, ...F64_MUL, ...F64_ADD, ...set(8),
  0x0b,
  ...get(8), ...get(3), 0xa3, ...set(8),
  ...get(8), ...SPLAT, ...set(7),
  0x41, 0x00, ...set(4),
  0x02, 0x40, 0x03, 0x40,
  ...get(4), ...get(5), 0x4f, 0x0d, 0x01,
  ...atF(1), ...atF(1), ...LOAD, ...get(7), ...atF(0), ...LOAD, ...MUL, ...SUB, ...STORE,
  ...get(4), 0x41, 0x10, ...I32_ADD, ...set(4),
  0x0c, 0x00,
  0x0b, 0x0b,
  ...get(2), 0x41, 0x01, 0x71, 0x04, 0x40,
  ...atF(1), ...atF(1), ...F64_LOAD, ...get(8), ...atF(0), ...F64_LOAD, ...F64_MUL, ...F64_SUB, ...F64_STORE,
  0x0b,
  0x0b,
];

// sweep params: 0 a, 1 stride, 2 pu, 3 pq, 4 cu, 5 p, 6 i (i32). locals: 7 r, 8 row (i32); 9 ur, 10 qr, 11 vr, 12 s, 13 dg (f64); 14 r8 (i32)
const at8 = (base: number): number[] => [...get(base), ...get(14), ...I32_ADD];
const F64_TWO = [0x44, 0, 0, 0, 0, 0, 0, 0, 0x40];
const SWEEP_BODY: number[] = [
  0x02, 0x40, 0x03, 0x40,
  ...get(7), ...get(6), 0x4f, 0x0d, 0x01,
  ...get(7), 0x41, 0x03, 0x74, ...set(14),
  ...get(0), ...get(7), ...get(1), 0x6c, ...I32_ADD, ...set(8),
  ...at8(2), ...F64_LOAD, ...set(9),
  ...at8(3), ...F64_LOAD, ...set(10),
  ...at8(4), ...F64_LOAD, ...set(11),
  ...get(8), ...get(2), ...get(3), ...get(4), ...get(5), ...get(7), ...get(9), ...get(10), ...get(11), 0x10, 0x00, ...set(12),
  ...at8(8), ...F64_LOAD, ...F64_TWO, ...get(9), ...F64_MUL, ...get(10), ...F64_MUL, ...F64_SUB, ...set(13),
  ...at8(8), ...get(13), ...F64_STORE,
  ...at8(5), ...at8(5), ...F64_LOAD, ...get(12), ...get(13), ...get(11), ...F64_MUL, ...F64_ADD, ...F64_ADD, ...F64_STORE,
  ...get(7), 0x41, 0x01, ...I32_ADD, ...set(7),
  0x0c, 0x00,
  0x0b, 0x0b,
  0x0b,
];

// rotSweep params: 0 z, 1 stride, 2 cols, 3 c, 4 s, 5 lo, 6 hi (i32). locals: 7 i, 8 row, 9 i8 (i32)
const ROT_SWEEP_BODY: number[] = [
  ...get(6), ...set(7),
  0x02, 0x40, 0x03, 0x40,
  ...get(7), ...get(5), 0x48, 0x0d, 0x01,
  ...get(7), 0x41, 0x03, 0x74, ...set(9),
  ...get(0), ...get(7), ...get(1), 0x6c, ...I32_ADD, ...set(8),
  ...get(8), ...get(8), ...get(1), ...I32_ADD, ...get(2),
  ...get(3), ...get(9), ...I32_ADD, ...F64_LOAD,
  ...get(4), ...get(9), ...I32_ADD, ...F64_LOAD,
  0x10, 0x01,
  ...get(7), 0x41, 0x01, 0x6b, ...set(7),
  0x0c, 0x00,
  0x0b, 0x0b,
  0x0b,
];

function uleb(n: number): number[] {
  const out: number[] = [];
  do {
    let b = n & 0x7f;
    n >>>= 7;
    if (n !== 0) b |= 0x80;
    out.push(b);
  } while (n !== 0);
  return out;
}

function section(id: number, payload: number[]): number[] {
  return [id, ...uleb(payload.length), ...payload];
}

function moduleBytes(): Uint8Array {
  const name = (s: string): number[] => [...uleb(s.length), ...Array.from(s, (c) => c.charCodeAt(0))];
  const type = [
    0x03,
    0x60, 0x09, 0x7f, 0x7f, 0x7f, 0x7f, 0x7f, 0x7f, 0x7c, 0x7c, 0x7c, 0x01, 0x7c, // fused
    0x60, 0x05, 0x7f, 0x7f, 0x7f, 0x7c, 0x7c, 0x00, // rot
    0x60, 0x04, 0x7f, 0x7f, 0x7f, 0x7c, 0x00, // reflect
    0x60, 0x07, 0x7f, 0x7f, 0x7f, 0x7f, 0x7f, 0x7f, 0x7f, 0x00, // sweep, rotSweep
  ];
  type[0] = 0x04;
  const func = [0x05, 0x00, 0x01, 0x02, 0x03, 0x03];
  const memory = [0x01, 0x00, 0x01];
  const exports = [
    0x06,
    ...name('memory'), 0x02, 0x00,
    ...name('fused'), 0x00, 0x00,
    ...name('rot'), 0x00, 0x01,
    ...name('reflect'), 0x00, 0x02,
    ...name('sweep'), 0x00, 0x03,
    ...name('rotSweep'), 0x00, 0x04,
  ];
  const bodies = [
    [0x03, 0x02, 0x7f, 0x05, 0x7b, 0x01, 0x7c, ...BODY],
    [0x03, 0x02, 0x7f, 0x04, 0x7b, 0x02, 0x7c, ...ROT_BODY],
    [0x03, 0x02, 0x7f, 0x02, 0x7b, 0x01, 0x7c, ...REFLECT_BODY],
    [0x03, 0x02, 0x7f, 0x05, 0x7c, 0x01, 0x7f, ...SWEEP_BODY],
    [0x01, 0x03, 0x7f, ...ROT_SWEEP_BODY],
  ];
  const code = [0x05, ...bodies.flatMap((b) => [...uleb(b.length), ...b])];
  return Uint8Array.from([
    0x00, 0x61, 0x73, 0x6d, 0x01, 0x00, 0x00, 0x00,
    ...section(1, type),
    ...section(3, func),
    ...section(5, memory),
    ...section(7, exports),
    ...section(10, code),
  ]);
}

let cached: SimdKernel | null | undefined;

/** The SIMD kernel, compiled once per realm; null when WebAssembly SIMD is unavailable or disabled. */
export function simdKernel(): SimdKernel | null {
  if (cached !== undefined) return cached;
  cached = null;
  try {
    if (typeof WebAssembly === 'undefined') return null;
    const instance = new WebAssembly.Instance(new WebAssembly.Module(moduleBytes()), {});
    const memory = instance.exports.memory as WebAssembly.Memory;
    const fused = instance.exports.fused as SimdKernel['fused'];
    const rot = instance.exports.rot as SimdKernel['rot'];
    const reflect = instance.exports.reflect as SimdKernel['reflect'];
    const sweep = instance.exports.sweep as SimdKernel['sweep'];
    const rotSweep = instance.exports.rotSweep as SimdKernel['rotSweep'];
    cached = { memory, fused, rot, reflect, sweep, rotSweep };
  } catch {
    cached = null;
  }
  return cached;
}

/** Grows the kernel's memory to at least `bytes` and returns a fresh view of it. */
export function simdMemory(kernel: SimdKernel, bytes: number): ArrayBuffer {
  const page = 65536;
  const have = kernel.memory.buffer.byteLength;
  if (bytes > have) kernel.memory.grow(Math.ceil((bytes - have) / page));
  return kernel.memory.buffer;
}
