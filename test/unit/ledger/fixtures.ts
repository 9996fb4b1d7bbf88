/** Hand-made session states and records for ledger tests (values invented; they test the codec, not numerics). */
import type { SessionState, StepRecord } from '../../../src/core/state';
import { buildLedger } from '../../../src/ledger';
import type { Ledger, LedgerInput } from '../../../src/ledger';

/** A NaN whose payload is not the canonical one (bits 0x7ff8000000000abc). */
export function payloadNaN(): number {
  const v = new DataView(new ArrayBuffer(8));
  v.setUint32(0, 0x7ff80000);
  v.setUint32(4, 0x00000abc);
  return v.getFloat64(0);
}

/** The exact bytes of a Float64Array, for bit-for-bit comparison. */
export function bits(a: Float64Array | Int32Array): number[] {
  return Array.from(new Uint8Array(a.buffer, a.byteOffset, a.byteLength));
}

export const P = 5;

/** A session state at `step` whose numbers include every special value. */
export function state(step: number, opts: { order?: boolean } = {}): SessionState {
  return {
    step,
    params: Float64Array.from([step * 0.1, -0, payloadNaN(), Infinity, -Number.MIN_VALUE]),
    optimizer: {
      kind: 'adam',
      t: step,
      buffers: { m: Float64Array.from([1e-300, -1e300, NaN, 0, step]), v: Float64Array.from([0.5, -Infinity, 3, 4, 5]) },
      scalars: { fill: 3, prevLoss: Infinity, zero: -0, odd: payloadNaN() },
    },
    rng: { s: [1, 4294967295, 123456789, 0], spare: step % 2 === 0 ? -0.25 : null },
    epoch: Math.floor(step / 3),
    cursor: step % 3,
    order: opts.order === false ? null : Int32Array.from([2, 0, 1, -7]),
  };
}

/** A step record with two layers; record 0 has the usual NaN batch loss. */
export function record(step: number, held = true): StepRecord {
  const r: StepRecord = {
    step,
    loss: 1 / (step + 1),
    batchLoss: step === 0 ? NaN : 1 / (step + 2),
    gradNorm: 0.5 / (step + 1),
    updateNorm: step === 0 ? 0 : 0.01,
    lr: 0.05,
    evaluations: step === 0 ? 0 : 1,
    layers: [
      { layer: 0, weightNorm: 1.5, gradNorm: 0.2, updateRatio: 1e-3 },
      { layer: 1, weightNorm: 0.7, gradNorm: -0, updateRatio: step === 0 ? NaN : 2e-3 },
    ],
    ms: 0.125,
  };
  if (held) r.heldOutLoss = step === 3 ? Infinity : 2 / (step + 1);
  return r;
}

export const SPEC = 'seed: 3\nmodel: { objective: rosenbrock }\n# ünïcode kept as written\n';

/** Input for a two-branch ledger: main (steps 0..10, checkpoints 0..9) and a fork at step 4. */
export function input(): LedgerInput {
  const steps = (a: number, b: number) => Array.from({ length: b - a + 1 }, (_, i) => a + i);
  return {
    engine: 'stepwell test',
    spec: SPEC,
    seed: 3,
    parameterCount: P,
    branches: [
      {
        name: 'main', trajectory: steps(0, 10).map((s) => record(s)), checkpoints: steps(0, 9).map((s) => state(s)), head: state(10),
        readouts: {
          curvature: { step: 10, top: [3, Infinity], note: 'f64:looks like a scalar', method: '~tilde' },
          sharpness: [{ step: 0, sharpness: 1, limit: 2 }, { step: 5, sharpness: NaN, limit: null }],
          audit: { step: 9, result: { maxRelError: -0, layers: [] } },
          noise: { step: 10, noiseScale: null, traceCovariance: Infinity },
          activations: { start: { step: 0, layers: [{ preSpread: 0.5 }] }, now: { step: 10, layers: [{ preSpread: NaN }] } },
          init: { rows: 3, chosen: { scheme: 'lecun-normal', gain: 0.05 } },
          data: { rows: 3, features: [{ index: 0, mean: -0, spread: 0 }], spreadRatio: null },
        },
      },
      {
        name: 'lower-lr', parent: { branch: 'main', step: 4 }, patch: { lr: 0.01 },
        trajectory: steps(4, 7).map((s) => record(s)), checkpoints: [state(4), state(5, { order: false })], head: state(7),
      },
    ],
    activeBranch: 'main',
    findings: [
      { rule: 'invented-rule', branch: 'main', step: 5, value: 0.5, measured: Infinity, statement: 'f64:looks like a scalar' },
      { rule: 'invented-rule', branch: 'lower-lr', step: 6, value: payloadNaN(), statement: '~tilde' },
    ],
    savedAt: '2026-01-01T00:00:00.000Z',
  };
}

/** A fresh, valid ledger as the notebook would hold it (through JSON). */
export function ledgerJson(): Ledger {
  return JSON.parse(JSON.stringify(buildLedger(input()))) as Ledger;
}
