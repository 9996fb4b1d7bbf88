/** Base64 of typed arrays: standard test vectors, agreement with Node's Buffer, bit-exact round trips, strict rejection. */
import { base64FromBytes, base64FromFloat64, base64FromInt32, bytesFromBase64, float64FromBase64, int32FromBase64 } from '../../../src/ledger';
import { bits, payloadNaN } from './fixtures';

const ascii = (s: string) => Uint8Array.from(s, (c) => c.charCodeAt(0));

describe('base64 encoding', () => {
  // source: RFC 4648, §10 "Test Vectors"
  it.each([
    ['', ''], ['f', 'Zg=='], ['fo', 'Zm8='], ['foo', 'Zm9v'], ['foob', 'Zm9vYg=='], ['fooba', 'Zm9vYmE='], ['foobar', 'Zm9vYmFy'],
  ])('RFC 4648 vector %j -> %j', (plain, encoded) => {
    expect(base64FromBytes(ascii(plain))).toBe(encoded);
    expect(Array.from(bytesFromBase64(encoded, 'x'))).toEqual(Array.from(ascii(plain)));
  });

  it('agrees with Node Buffer on every length 0..64 and all byte values', () => {
    // source: Node.js 20 Buffer.toString('base64') as an independent encoder
    for (let n = 0; n <= 64; n++) {
      const bytes = Uint8Array.from({ length: n }, (_, i) => (i * 97 + n * 31) & 255);
      const ref = Buffer.from(bytes).toString('base64');
      expect(base64FromBytes(bytes)).toBe(ref);
      expect(Array.from(bytesFromBase64(ref, 'x'))).toEqual(Array.from(bytes));
    }
    const all = Uint8Array.from({ length: 256 }, (_, i) => i);
    expect(base64FromBytes(all)).toBe(Buffer.from(all).toString('base64'));
  });

  it('writes float64 little-endian: 1.0 is bytes 00 00 00 00 00 00 f0 3f', () => {
    // from memory: IEEE 754 binary64 of 1.0 is 0x3FF0000000000000
    expect(base64FromFloat64(Float64Array.of(1))).toBe(Buffer.from([0, 0, 0, 0, 0, 0, 0xf0, 0x3f]).toString('base64'));
    // common practice: two's complement int32 -1 is ff ff ff ff
    expect(base64FromInt32(Int32Array.of(-1, 1))).toBe(Buffer.from([255, 255, 255, 255, 1, 0, 0, 0]).toString('base64'));
  });

  it('round-trips float64 bit for bit, NaN payloads, -0, ±Infinity and subnormals included', () => {
    const a = Float64Array.from([0, -0, NaN, payloadNaN(), Infinity, -Infinity, Number.MIN_VALUE, -Number.MAX_VALUE, 0.1, 1 / 3]);
    const b = float64FromBase64(base64FromFloat64(a), 'x', a.length);
    expect(bits(b)).toEqual(bits(a));
    expect(Object.is(b[1], -0)).toBe(true);
  });

  it('round-trips int32 including the extremes', () => {
    const a = Int32Array.from([0, -1, 2147483647, -2147483648, 12345]);
    expect(Array.from(int32FromBase64(base64FromInt32(a), 'x'))).toEqual(Array.from(a));
  });
});

describe('base64 decoding rejects malformed text with the field named', () => {
  const F = 'branches[0].checkpoints[2].state.params';
  it.each<[string, () => unknown, string]>([
    ['length not a multiple of 4', () => float64FromBase64('AAAAAAAAAAAAA', F), `${F}: base64 length 13 is not a multiple of 4`],
    ['foreign character', () => float64FromBase64('AAAA!AAAAAA=', F), `${F}: invalid base64 character "!" at position 4`],
    ['non-ASCII character', () => float64FromBase64('AAAAé', F), `${F}: base64 length 5 is not a multiple of 4`],
    ['padding in the middle', () => bytesFromBase64('AA==AAAA', F), `${F}: invalid base64 character "=" at position 2`],
    ['padding only', () => bytesFromBase64('====', F), `${F}: invalid base64 character "=" at position 0`],
    ['non-zero padding bits', () => bytesFromBase64('Zh==', F), `${F}: base64 has non-zero padding bits (the text was altered)`],
    ['byte count not a multiple of 8', () => float64FromBase64('AAAA', F), `${F}: decodes to 3 bytes, not a multiple of 8 (float64)`],
    ['wrong number of doubles', () => float64FromBase64(base64FromFloat64(new Float64Array(3)), F, 5), `${F}: holds 3 numbers, expected 5`],
    ['not a string', () => float64FromBase64(42, F), `${F}: expected a base64 string, got number`],
    ['null', () => float64FromBase64(null, F), `${F}: expected a base64 string, got null`],
  ])('%s', (_name, fn, message) => {
    expect(fn).toThrow(message);
  });

  it('an int32 field with 6 bytes is rejected', () => {
    expect(() => int32FromBase64(Buffer.from([1, 2, 3, 4, 5, 6]).toString('base64'), 'order')).toThrow('order: decodes to 6 bytes, not a multiple of 4 (int32)');
  });
});
