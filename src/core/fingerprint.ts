/**
 * Fingerprints: SHA-256 (FIPS 180-4, via the audited `@noble/hashes`) over the exact
 * little-endian bytes of float64 arrays and integers, hex-encoded and shortened to 16
 * hex digits for display. Equal fingerprints mean bit-identical inputs.
 */
import { sha256 } from '@noble/hashes/sha256';
import { bytesToHex } from '@noble/hashes/utils';

/** Incremental fingerprint builder over numbers, arrays and strings. */
export class Fingerprinter {
  private readonly h = sha256.create();
  private readonly scratch = new DataView(new ArrayBuffer(8));

  /** Adds a float64 array by its exact little-endian bytes. */
  array(a: Float64Array): this {
    const bytes = new Uint8Array(a.length * 8);
    const view = new DataView(bytes.buffer);
    for (let i = 0; i < a.length; i++) view.setFloat64(i * 8, a[i], true);
    this.number(a.length);
    this.h.update(bytes);
    return this;
  }

  /** Adds one float64 number (integers included) by its exact bytes. */
  number(x: number): this {
    this.scratch.setFloat64(0, x, true);
    this.h.update(new Uint8Array(this.scratch.buffer.slice(0)));
    return this;
  }

  /** Adds a UTF-16 string (length-prefixed so concatenations cannot collide). */
  text(s: string): this {
    this.number(s.length);
    const bytes = new Uint8Array(s.length * 2);
    for (let i = 0; i < s.length; i++) {
      const c = s.charCodeAt(i);
      bytes[2 * i] = c & 0xff;
      bytes[2 * i + 1] = c >>> 8;
    }
    this.h.update(bytes);
    return this;
  }

  /** The full 64-hex-digit digest. */
  hex(): string {
    return bytesToHex(this.h.digest());
  }
}
