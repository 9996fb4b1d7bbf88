/**
 * Compiles the WebAssembly modules of `binaries.ts` (assembled from the `.wat` sources beside
 * it) once per realm and instantiates them. Every function here returns null instead of
 * throwing when the engine has no WebAssembly, lacks a feature a module uses (fixed-width or
 * relaxed SIMD), or cannot allocate memory: callers then take their plain-JavaScript path.
 */
import * as binaries from './binaries';

/** Names of the assembled modules. */
export type ModuleName = keyof typeof binaries;

const compiled = new Map<ModuleName, WebAssembly.Module | null>();

/** Bytes of a base64 text (RFC 4648 alphabet, with or without padding); core has no atob. */
export function decodeBase64(text: string): Uint8Array {
  const clean = text.replace(/=+$/, '');
  const out = new Uint8Array((clean.length * 3) >> 2);
  let acc = 0;
  let bits = 0;
  let k = 0;
  for (let i = 0; i < clean.length; i++) {
    const c = clean.charCodeAt(i);
    const v = c >= 65 && c <= 90 ? c - 65 : c >= 97 && c <= 122 ? c - 71 : c >= 48 && c <= 57 ? c + 4 : c === 43 ? 62 : c === 47 ? 63 : -1;
    if (v < 0) throw new Error(`not base64: character ${JSON.stringify(clean[i])} at ${i}`);
    acc = (acc << 6) | v;
    bits += 6;
    if (bits >= 8) {
      bits -= 8;
      out[k++] = (acc >> bits) & 0xff;
    }
  }
  return out;
}

/** The compiled module, or null when this engine cannot run it. */
export function wasmModule(name: ModuleName): WebAssembly.Module | null {
  if (typeof WebAssembly === 'undefined') return null;
  let m = compiled.get(name);
  if (m === undefined) {
    try {
      const bytes = decodeBase64(binaries[name]);
      m = WebAssembly.validate(bytes) ? new WebAssembly.Module(bytes) : null;
    } catch {
      m = null;
    }
    compiled.set(name, m);
  }
  return m;
}

/**
 * A fresh instance of the module with its exports, or null (see {@link wasmModule}): with its
 * own memory, or with what `imports` gives it (a derived module imports its source's memory).
 */
export function wasmInstance(name: ModuleName, imports: WebAssembly.Imports = {}): WebAssembly.Exports | null {
  const m = wasmModule(name);
  if (m === null) return null;
  try {
    return new WebAssembly.Instance(m, imports).exports;
  } catch {
    return null;
  }
}

/** Grows `memory` to at least `bytes`; false when the engine refuses (then the caller falls back). */
export function growTo(memory: WebAssembly.Memory, bytes: number): boolean {
  const page = 65536;
  const have = memory.buffer.byteLength;
  if (bytes <= have) return true;
  try {
    memory.grow(Math.ceil((bytes - have) / page));
    return true;
  } catch {
    return false;
  }
}
