/** Readouts in the ledger: exact plain-JSON encoding, the sharpness cap, the size limit and the digest. */
import { capSharpness, decodeFindings, decodeLoose, decodeReadouts, encodeFindings, encodeLoose, encodeReadouts, MAX_FINDINGS_PER_BRANCH, MAX_READOUT_BYTES, sha256Hex } from '../../../src/ledger';
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

describe('version-3 readouts and findings', () => {
  it('round-trips the diagnosis readouts exactly, under the digest', () => {
    const r = encodeReadouts({ noise: { step: 3, traceCovariance: Infinity }, activations: { start: { step: 0, spread: payloadNaN() } }, init: { rows: 2 }, data: { spreadRatio: -0 } });
    const back = decodeReadouts(JSON.parse(JSON.stringify(r)), 'x');
    expect((back.noise as { traceCovariance: number }).traceCovariance).toBe(Infinity);
    expect(bits(Float64Array.of((back.activations as { start: { spread: number } }).start.spread))).toEqual(bits(Float64Array.of(payloadNaN())));
    expect(Object.is((back.data as { spreadRatio: number }).spreadRatio, -0)).toBe(true);
    expect(back.init).toEqual({ rows: 2 });
    const edited = JSON.parse(JSON.stringify(r));
    edited.init.rows = 3;
    expect(() => decodeReadouts(edited, 'b.readouts')).toThrow('b.readouts.digest: does not match the readouts');
  });

  it('keeps the digest of readouts that hold only the version-2 three (so version-2 ledgers stay valid)', () => {
    // Version 2 hashed exactly the canonical JSON of [curvature, sharpness, audit] with this prefix (commit 213ef99).
    const r = encodeReadouts({ curvature: { step: 1, top: [2] } }) as { digest: string };
    expect(r.digest).toBe(sha256Hex('stepwell-readouts-v1;[{"step":1,"top":[2]},null,null]'));
  });

  it('encodes findings with their branch, non-finite numbers exact, and at most the cap per branch', () => {
    const many = Array.from({ length: MAX_FINDINGS_PER_BRANCH + 5 }, (_, i) => ({ branch: 'a', id: 'plateau', step: i, measured: i === 0 ? Infinity : i }));
    const enc = encodeFindings([...many, { branch: 'b', id: 'diverged', measured: NaN }]);
    expect(enc).toHaveLength(MAX_FINDINGS_PER_BRANCH + 1);
    const back = decodeFindings(JSON.parse(JSON.stringify(enc)));
    expect(back[0].measured).toBe(Infinity);
    expect(Number.isNaN(back[back.length - 1].measured)).toBe(true);
    expect(back[MAX_FINDINGS_PER_BRANCH - 1].step).toBe(MAX_FINDINGS_PER_BRANCH - 1);
    expect(() => encodeFindings([{ id: 'x' }])).toThrow("findings[0].branch: must name the finding's branch, got nothing");
  });
});
