/**
 * The ledger size counted without serializing it: a lower bound of the UTF-8 bytes of its JSON
 * text, exact for ASCII text without escapes, and stopping once past a limit.
 */
import { jsonBytes, tooLargeMessage } from '../../../src/ledger/size';

// source: ECMAScript JSON.stringify and the WHATWG TextEncoder (UTF-8) as the outside reference
const utf8Json = (v: unknown): number => new TextEncoder().encode(JSON.stringify(v)).length;

describe('jsonBytes', () => {
  const asciiValues: unknown[] = [
    0, -1.5, 1e-300, 123456789012, true, false, null, '', 'abc', [], {}, [1, 2, 3], { a: 1 },
    { format: 'stepwell-ledger', version: 3, branches: [{ name: 'main', head: { step: 14, params: 'QUJD'.repeat(500) } }, { name: 'lr=0.5', parent: { branch: 'main', step: 3 } }] },
    [[[]], [{}], [null, true, 'x']], { 'a key': [0.1, 0.2, 0.30000000000000004], nested: { deeper: { deepest: 'z' } } }
  ];

  it('equals the UTF-8 length of JSON.stringify for plain values', () => {
    expect(asciiValues.length).toBe(16);
    for (const v of asciiValues) expect(jsonBytes(v)).toBe(utf8Json(v));
  });

  it('equals it when strings need escapes or are not ASCII', () => {
    const others: unknown[] = [
      'quote " and \\ backslash', 'line\nbreak\ttab\r\b\f', '\u0000\u0001\u001f\u007f', 'é ü 温度 🌡', '\ud800 lone \udc00 surrogates \ud83c',
      { 'clé "x"': 'valeur ✓', list: ['\u202e', '\u2028\u2029', NaN, Infinity, -0] }, '<img src=x onerror="a()">'
    ];
    expect(others.length).toBe(7);
    for (const v of others) expect(jsonBytes(v)).toBe(utf8Json(v));
  });

  it('walks large and deep values without recursion', () => {
    const big = { branches: Array.from({ length: 1000 }, (_, i) => ({ name: `b${i}`, params: 'A'.repeat(1000) })) };
    expect(jsonBytes(big)).toBe(utf8Json(big));
    let deep: unknown = 'leaf';
    for (let i = 0; i < 200_000; i++) deep = [deep];
    expect(jsonBytes(deep)).toBe(2 * 200_000 + 6);
  });

  it('says how large, the limit and the setting', () => {
    expect(tooLargeMessage(61_234_567, 50_000_000)).toBe('too large to open: 61.2 MB > limit 50.0 MB (setting maxLedgerBytes); it was not read and is kept as it is. Raise the setting to open it, or Start over to replace it');
    expect(tooLargeMessage(50_000_001, 50_000_000)).toMatch(/^too large to open: 50000001 bytes > limit 50000000 bytes \(setting maxLedgerBytes\)/);
  });
});
