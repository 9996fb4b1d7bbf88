/**
 * The pure part of reading a cell's files through the contents API: names resolved against the
 * notebook's folder, and base64 content decoded with its size checked before allocation.
 */
import fc from 'fast-check';
import { bytesOfBase64, resolveFromNotebook } from '../../../src/plugin/file-bytes';

/** Base64 wrapped in lines of 76 characters, as the Jupyter server's `base64.encodebytes` sends it. */
// source: RFC 2045 §6.8 (MIME lines of at most 76 characters), which Python's base64.encodebytes follows
const wrapped = (b: Uint8Array): string => (Buffer.from(b).toString('base64').match(/.{1,76}/g) ?? []).join('\n') + (b.length > 0 ? '\n' : '');

describe('resolveFromNotebook', () => {
  it.each([
    ['study.ipynb', 'readings.csv', 'readings.csv'],
    ['lab/study.ipynb', 'readings.csv', 'lab/readings.csv'],
    ['lab/study.ipynb', './data/readings.csv', 'lab/data/readings.csv'],
    ['lab/week 2/study.ipynb', '../shared/start.safetensors', 'lab/shared/start.safetensors'],
    ['lab/study.ipynb', '/shared/x.npy', 'shared/x.npy']
  ])('%s + %s → %s', (nb, name, want) => {
    expect(resolveFromNotebook(nb, name)).toEqual({ ok: true, path: want });
  });

  it('refuses a name above the root and a folder', () => {
    const above = resolveFromNotebook('study.ipynb', '../secret.csv');
    expect(above.ok).toBe(false);
    if (!above.ok) expect(above.message).toBe("'../secret.csv' points above the Jupyter root (the notebook is in the root)");
    expect(resolveFromNotebook('a/study.ipynb', '..').ok).toBe(false);
  });
});

describe('bytesOfBase64', () => {
  it('decodes what Node decodes, with or without the server\'s line breaks (2000 random byte strings)', () => {
    // source: Node.js Buffer base64 decoder as the reference
    fc.assert(
      fc.property(fc.uint8Array({ maxLength: 300 }), fc.boolean(), (bytes, wrap) => {
        const text = wrap ? wrapped(bytes) : Buffer.from(bytes).toString('base64');
        const got = bytesOfBase64(text, 1 << 20);
        expect(got.ok).toBe(true);
        if (got.ok) expect(Buffer.from(got.bytes).equals(Buffer.from(bytes))).toBe(true);
      }),
      { numRuns: 2000 }
    );
  });

  it('refuses more bytes than the limit before allocating, and malformed text', () => {
    const text = Buffer.alloc(1001).toString('base64');
    expect(bytesOfBase64(text, 1000)).toEqual({ ok: false, message: 'the file has 1001 bytes, above the limit of 1000 for a data or weights file' });
    expect(bytesOfBase64(text, 1001).ok).toBe(true);
    expect(bytesOfBase64('AAA', 10).ok).toBe(false);
    expect(bytesOfBase64('AA=A', 10).ok).toBe(false);
    expect(bytesOfBase64('A€AA', 10).ok).toBe(false);
  });
});
