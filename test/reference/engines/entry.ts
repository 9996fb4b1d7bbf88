/**
 * The script every engine runs (bundled by `bundle.ts` into one self-contained file, the same
 * bytes for V8, Chromium, SpiderMonkey and QuickJS): it rebuilds each experiment from plain
 * JSON data, steps it with core's Session and returns, per update, the state's fingerprint and
 * a fingerprint of the step record's numbers. Uses no I/O and no host API: the caller passes a
 * string in and gets a string back.
 */
import { Fingerprinter } from '../../../src/core/fingerprint';
import { Session } from '../../../src/core/session';
import type { Experiment } from '../../../src/core/setup';
import type { StepRecord } from '../../../src/core/state';

/** One case as the engines receive it: the experiment with typed arrays written as number lists. */
export interface PlainCase {
  name: string;
  steps: number;
  experiment: unknown;
}

/** What an engine returns for one case: `states[k]` and `records[k]` after k updates (k = 0 is the start). */
export interface CaseTrace {
  name: string;
  /** The network's matrix kernels in this engine: `simd` (WebAssembly) or `scalar`; `none` for analytic objectives. */
  kernels: string;
  states: string[];
  records: string[];
}

const ARRAY_KEYS = new Set(['x', 'y']);

/** Turns the number lists of `data` (x, y, heldOut.x, heldOut.y) back into Float64Arrays. */
function revive(value: unknown, key = ''): unknown {
  if (Array.isArray(value)) return ARRAY_KEYS.has(key) && value.every((v) => typeof v === 'number') ? Float64Array.from(value as number[]) : value.map((v) => revive(v));
  if (value !== null && typeof value === 'object') {
    const out: Record<string, unknown> = {};
    for (const [k, v] of Object.entries(value)) out[k] = revive(v, k);
    return out;
  }
  return value;
}

/** A fingerprint of every number of a step record except its wall time. */
function recordPrint(r: StepRecord): string {
  const f = new Fingerprinter().number(r.step).number(r.loss).number(r.batchLoss).number(r.gradNorm).number(r.updateNorm).number(r.lr).number(r.evaluations);
  f.number(r.heldOutLoss ?? NaN);
  for (const l of r.layers) f.number(l.layer).number(l.weightNorm).number(l.gradNorm).number(l.updateRatio);
  return f.hex().slice(0, 16);
}

/** Replays every case of `json` (a PlainCase[] as text) and returns the CaseTrace[] as text. */
export function replayCases(json: string): string {
  const cases = JSON.parse(json) as PlainCase[];
  const out: CaseTrace[] = cases.map((c) => {
    const session = Session.create(revive(c.experiment) as Experiment);
    const states = [session.fingerprint()];
    const records = [recordPrint(session.initialRecord())];
    for (let k = 0; k < c.steps; k++) {
      const [rec] = session.step(1);
      states.push(session.fingerprint());
      records.push(recordPrint(rec));
    }
    const kernels = (session.objective as { kernelKind?: string }).kernelKind ?? 'none';
    return { name: c.name, kernels, states, records };
  });
  return JSON.stringify(out);
}

(globalThis as unknown as { stepwellEngineReplay: typeof replayCases }).stepwellEngineReplay = replayCases;
