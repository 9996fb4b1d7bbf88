/** Readouts in the ledger: exact plain-JSON encoding, the sharpness cap, the size limit and the digest. */
import { capSharpness, decodeLoose, decodeReadouts, encodeLoose, encodeReadouts, MAX_READOUT_BYTES } from '../../../src/ledger';
import { bits, payloadNaN } from './fixtures';

describe('exact plain JSON', () => {
  it('round-trips special numbers bit for bit and strings that look like encodings', () => {
    const value = { a: [payloadNaN(), -0, Infinity, -Infinity, 1e-310, 0.1], s: ['f64:0000000000000000', '~x', 'plain', ''], n: null, b: true };
    const back = decodeLoose(JSON.parse(JSON.stringify(encodeLoose(value, 'v'))), 'v') as typeof value;
    expect(bits(Float64Array.from(back.a))).toEqual(bits(Float64Array.from(value.a)));
    expect(back.s).toEqual(value.s);
    expect([back.n, back.b]).toEqual([null, true]);
  });

  it('refuses what is not plain JSON, naming the field', () => {
    expect(() => encodeLoose({ x: { y: new Float64Array(1) } }, 'readouts.audit')).toThrow('readouts.audit.x.y: is a class instance or typed array, which is not plain JSON');
  });
});

describe('sharpness cap', () => {
  it('keeps everything up to the cap; beyond, first, last, the first crossing and a power-of-two stride', () => {
    const pts = Array.from({ length: 1001 }, (_, step) => ({ step, sharpness: step === 333 ? 5 : 1, limit: 2 }));
    expect(capSharpness(pts.slice(0, 10), 10)).toHaveLength(10);
    const kept = capSharpness(pts, 100);
    expect(kept.length).toBeLessThanOrEqual(100);
    expect(kept[0].step).toBe(0);
    expect(kept[kept.length - 1].step).toBe(1000);
    expect(kept.some((p) => p.step === 333)).toBe(true);
    // stride 16 is the smallest power of two that fits 100: 0, 16, …, 992 (63) + 333 + 1000
    expect(kept).toHaveLength(65);
  });
});

describe('encodeReadouts / decodeReadouts', () => {
  it('keeps nothing when there is nothing, and refuses a readout above the size limit', () => {
    expect(encodeReadouts({ curvature: null, sharpness: [], audit: null })).toBeUndefined();
    const big = { step: 1, text: "x".repeat(MAX_READOUT_BYTES) }; // JSON: {"step":1,"text":"…"} adds 20 bytes
    expect(() => encodeReadouts({ audit: big })).toThrow(`readouts.audit: takes ${MAX_READOUT_BYTES + 20} bytes, more than the ${MAX_READOUT_BYTES} a ledger keeps per readout`);
  });

  it('keeps its digest when a tool saves the notebook with sorted keys (nbformat does)', () => {
    const r = encodeReadouts({ curvature: { step: 4, top: [3, 1], summary: { zeta: 1, alpha: { b: 2, a: 1 } } }, sharpness: [{ step: 1, sharpness: 2, limit: 3 }] });
    const sorted = JSON.parse(JSON.stringify(r, (_k, v) => (v && typeof v === 'object' && !Array.isArray(v) ? Object.fromEntries(Object.entries(v).sort(([a], [b]) => (a < b ? -1 : 1))) : v)));
    expect(JSON.stringify(sorted)).not.toBe(JSON.stringify(r));
    expect(() => decodeReadouts(sorted, 'x')).not.toThrow();
  });

  it('decodes what it encoded and notices an edit', () => {
    const r = encodeReadouts({ curvature: { step: 4, top: [NaN] }, audit: { step: 2 } });
    const back = decodeReadouts(JSON.parse(JSON.stringify(r)), 'x');
    expect(back.sharpness).toEqual([]);
    expect(Number.isNaN((back.curvature as { top: number[] }).top[0])).toBe(true);
    const edited = JSON.parse(JSON.stringify(r));
    edited.audit.step = 3;
    expect(() => decodeReadouts(edited, 'branches[0].readouts')).toThrow('branches[0].readouts.digest: does not match the readouts');
  });
});
