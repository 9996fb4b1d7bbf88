/**
 * Seeded pseudo-random generator for every random draw in `core/`.
 *
 * Algorithm: xoshiro128** (Blackman & Vigna, "Scrambled linear pseudorandom number
 * generators", ACM TOMS 2021) over four 32-bit words, seeded by SplitMix32 from a
 * non-negative integer seed. Uniform doubles take 53 random bits from two outputs.
 * Normal draws use the Box–Muller transform (one cosine branch per pair; the sine
 * partner is cached in the state so the state stays a plain, serializable record), with
 * core's engine-independent log, sin and cos, so a seed draws the same bits in every engine.
 *
 * `Math.random` never appears in core: the state is data, so a session that
 * serializes its generator and restores it continues the identical stream.
 */

import { cos, log, sin } from './elementary';

/** Serializable generator state: four 32-bit words plus a cached normal deviate. */
export interface RngState {
  /** The four xoshiro128** state words (unsigned 32-bit integers). */
  s: [number, number, number, number];
  /** The cached second Box–Muller deviate, or null when none is pending. */
  spare: number | null;
}

/** SplitMix32 step: mixes a 32-bit counter into a well-spread 32-bit word. */
function splitmix32(x: number): number {
  let z = (x + 0x9e3779b9) | 0;
  z = Math.imul(z ^ (z >>> 16), 0x85ebca6b);
  z = Math.imul(z ^ (z >>> 13), 0xc2b2ae35);
  return (z ^ (z >>> 16)) >>> 0;
}

/**
 * A seeded generator over an explicit {@link RngState}.
 * Construct from a seed (`Rng.fromSeed(42)`) or restore from a saved state.
 */
export class Rng {
  private readonly st: RngState;

  private constructor(state: RngState) {
    this.st = state;
  }

  /**
   * Creates a generator from an integer seed (any safe integer; negative and
   * fractional seeds are rejected so that two spellings never mean one stream).
   */
  static fromSeed(seed: number): Rng {
    if (!Number.isSafeInteger(seed) || seed < 0) {
      throw new RangeError(`seed must be a non-negative integer, got ${seed}`);
    }
    const lo = seed >>> 0;
    const hi = Math.floor(seed / 4294967296) >>> 0;
    let x = lo ^ Math.imul(hi, 0x27d4eb2d);
    const s: [number, number, number, number] = [0, 0, 0, 0];
    for (let i = 0; i < 4; i++) {
      x = (x + 0x9e3779b9) | 0;
      s[i] = splitmix32(x ^ (i === 1 ? hi : 0));
    }
    if ((s[0] | s[1] | s[2] | s[3]) === 0) s[0] = 1;
    return new Rng({ s, spare: null });
  }

  /** Restores a generator from a state previously returned by {@link Rng.state}. */
  static fromState(state: RngState): Rng {
    return new Rng({ s: [state.s[0] >>> 0, state.s[1] >>> 0, state.s[2] >>> 0, state.s[3] >>> 0], spare: state.spare });
  }

  /** A copy of the current state (plain JSON-serializable record). */
  state(): RngState {
    return { s: [this.st.s[0], this.st.s[1], this.st.s[2], this.st.s[3]], spare: this.st.spare };
  }

  /**
   * Derives an independent generator for a named purpose (e.g. "init",
   * "batches", "probe") so that adding draws in one place never shifts another stream.
   */
  fork(label: string): Rng {
    let h = 0x811c9dc5;
    for (let i = 0; i < label.length; i++) h = Math.imul(h ^ label.charCodeAt(i), 0x01000193);
    const s: [number, number, number, number] = [0, 0, 0, 0];
    for (let i = 0; i < 4; i++) s[i] = splitmix32((this.st.s[i] ^ h ^ Math.imul(i + 1, 0x632be5ab)) | 0);
    if ((s[0] | s[1] | s[2] | s[3]) === 0) s[0] = 1;
    return new Rng({ s, spare: null });
  }

  /** Next raw 32-bit unsigned output of xoshiro128**. */
  nextUint32(): number {
    const s = this.st.s;
    const result = Math.imul(rotl(Math.imul(s[1], 5), 7), 9) >>> 0;
    const t = s[1] << 9;
    s[2] ^= s[0];
    s[3] ^= s[1];
    s[1] ^= s[2];
    s[0] ^= s[3];
    s[2] ^= t;
    s[3] = rotl(s[3], 11);
    s[0] >>>= 0; s[1] >>>= 0; s[2] >>>= 0; s[3] >>>= 0;
    return result;
  }

  /** Uniform double in [0, 1) with 53 random bits. */
  uniform(): number {
    const hi = this.nextUint32() >>> 5; // 27 bits
    const lo = this.nextUint32() >>> 6; // 26 bits
    return (hi * 67108864 + lo) / 9007199254740992;
  }

  /** Uniform integer in [0, n) without modulo bias (rejection sampling). */
  int(n: number): number {
    if (!Number.isInteger(n) || n <= 0 || n > 4294967296) throw new RangeError(`int(n) needs 1 <= n <= 2^32, got ${n}`);
    const limit = 4294967296 - (4294967296 % n);
    for (;;) {
      const x = this.nextUint32();
      if (x < limit) return x % n;
    }
  }

  /** Standard normal deviate (Box–Muller; the pair's second value is cached). */
  normal(): number {
    if (this.st.spare !== null) {
      const v = this.st.spare;
      this.st.spare = null;
      return v;
    }
    let u = 0;
    while (u === 0) u = this.uniform();
    const v = this.uniform();
    const r = Math.sqrt(-2 * log(u));
    const theta = 2 * Math.PI * v;
    this.st.spare = r * sin(theta);
    return r * cos(theta);
  }

  /** In-place Fisher–Yates shuffle of `a` (Durstenfeld's variant). */
  shuffle(a: Int32Array | number[]): void {
    for (let i = a.length - 1; i > 0; i--) {
      const j = this.int(i + 1);
      const t = a[i];
      a[i] = a[j];
      a[j] = t;
    }
  }

  /** Fills `out` with Rademacher ±1 entries (Hutchinson probes). */
  rademacher(out: Float64Array): Float64Array {
    for (let i = 0; i < out.length; i++) out[i] = this.nextUint32() & 1 ? 1 : -1;
    return out;
  }

  /** Fills `out` with standard normal entries. */
  fillNormal(out: Float64Array): Float64Array {
    for (let i = 0; i < out.length; i++) out[i] = this.normal();
    return out;
  }
}

function rotl(x: number, k: number): number {
  return (x << k) | (x >>> (32 - k));
}
