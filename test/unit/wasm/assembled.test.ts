/**
 * core/wasm/binaries.ts is what wabt (npm `wabt`, the WebAssembly Binary Toolkit) assembles
 * from the .wat sources beside it: editing a source without `npm run build:wasm` fails here.
 */
import { spawnSync } from 'node:child_process';
import { join } from 'node:path';
import { decodeBase64 } from '../../../src/core/wasm/load';
import * as binaries from '../../../src/core/wasm/binaries';

describe('the assembled WebAssembly modules', () => {
  it('match their .wat sources', () => {
    // assemble.mjs is an ES module (jest runs CommonJS): run its check mode in Node.
    const r = spawnSync(process.execPath, [join(__dirname, '../../../src/core/wasm/assemble.mjs'), '--check'], { encoding: 'utf8' });
    expect(r.stderr).toBe('');
    expect(r.status).toBe(0);
  });

  it('decode to valid WebAssembly with the SIMD proposal (magic number, version 1)', () => {
    // networkFused uses relaxed SIMD, which Node 20 validates only behind a flag: checked in
    // test/reference/model/fused.test.ts, which sets it.
    const names = (Object.keys(binaries) as (keyof typeof binaries)[]).filter((n) => n !== 'networkFused');
    expect(names.length).toBeGreaterThanOrEqual(2);
    for (const name of names) {
      const bytes = decodeBase64(binaries[name]);
      // source: WebAssembly Core Specification 2.0, §5.5.16 — magic \0asm, version 1.
      expect(Array.from(bytes.subarray(0, 8))).toEqual([0x00, 0x61, 0x73, 0x6d, 0x01, 0x00, 0x00, 0x00]);
      expect(WebAssembly.validate(bytes)).toBe(true);
    }
  });

  it('decodes base64 as RFC 4648 does', () => {
    // source: RFC 4648 §10 test vectors.
    const cases: [string, string][] = [['', ''], ['Zg==', 'f'], ['Zm8=', 'fo'], ['Zm9v', 'foo'], ['Zm9vYg==', 'foob'], ['Zm9vYmE=', 'fooba'], ['Zm9vYmFy', 'foobar']];
    expect(cases).toHaveLength(7);
    for (const [b64, text] of cases) expect(String.fromCharCode(...decodeBase64(b64))).toBe(text);
  });
});
