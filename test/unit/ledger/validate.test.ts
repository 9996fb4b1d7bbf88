/**
 * validateLedger accepts what buildLedger writes and rejects each class of hand corruption
 * with a message that names the field; recoverSpec still finds the user's text.
 */
import { base64FromFloat64, migrateLedger, recoverSpec, validateLedger, LEDGER_KEY } from '../../../src/ledger';
import type { Migration } from '../../../src/ledger';
import { ledgerJson, SPEC } from './fixtures';

type Json = Record<string, any>;

function errorsOf(mutate: (l: Json) => void): string[] {
  const l = ledgerJson() as unknown as Json;
  mutate(l);
  const r = validateLedger(l);
  if (r.ok) throw new Error('expected the ledger to be rejected');
  return r.errors;
}

/** Flips one bit of a base64 field by rewriting one of its first characters (stays well-formed). */
function flipChar(b64: string): string {
  return (b64[0] === 'A' ? 'B' : 'A') + b64.slice(1);
}

describe('validateLedger', () => {
  it('accepts a freshly built ledger read back from JSON', () => {
    const r = validateLedger(ledgerJson());
    expect(r.ok ? [] : r.errors).toEqual([]);
  });
  it('uses the namespaced metadata key', () => {
    expect(LEDGER_KEY).toBe('stepwell');
  });

  it.each<[string, (l: Json) => void, string]>([
    ['params base64 of length 13', (l) => (l.branches[0].checkpoints[2].state.params = 'AAAAAAAAAAAAA'), 'branches[0].checkpoints[2].state.params: base64 length 13 is not a multiple of 4'],
    ['params with a foreign character', (l) => (l.branches[0].head.state.params = '*' + l.branches[0].head.state.params.slice(1)), 'branches[0].head.state.params: invalid base64 character "*" at position 0'],
    ['params of the wrong count', (l) => (l.branches[1].head.state.params = 'AAAAAAAAAAA='), 'branches[1].head.state.params: holds 1 numbers, expected 5'],
    ['optimizer buffer cut short', (l) => (l.branches[0].checkpoints[0].state.optimizer.buffers.m = 'AAAA'), 'branches[0].checkpoints[0].state.optimizer.buffers.m: decodes to 3 bytes, not a multiple of 8 (float64)'],
    ['row order of odd size', (l) => (l.branches[0].head.state.order = 'AAAAAAA='), 'branches[0].head.state.order: decodes to 5 bytes, not a multiple of 4 (int32)'],
    ['edited params (still valid base64)', (l) => (l.branches[0].checkpoints[1].state.params = flipChar(l.branches[0].checkpoints[1].state.params)), 'branches[0].checkpoints[1].fingerprint: does not match the state it describes (the state was edited or damaged)'],
    ['fingerprint not hex', (l) => (l.branches[0].head.fingerprint = 'xyz'), 'branches[0].head.fingerprint: expected 64 lowercase hex digits (SHA-256), got "xyz"'],
    ['checkpoint steps out of order', (l) => l.branches[0].checkpoints.reverse(), 'branches[0].checkpoints[1].step: steps must increase'],
    ['checkpoint at the head step', (l) => l.branches[0].checkpoints.push(l.branches[0].head), 'is 10, not before the head (step 10)'],
    ['step and state.step disagree', (l) => (l.branches[0].checkpoints[1].step = 99), 'branches[0].checkpoints[1].step: is 99, but branches[0].checkpoints[1].state.step is'],
    ['edited loss column (still valid base64)', (l) => (l.branches[0].trajectory.loss = flipChar(l.branches[0].trajectory.loss)), 'branches[0].trajectory.digest: does not match the columns (the records were edited or damaged)'],
    ['trajectory steps not increasing', (l) => (l.branches[1].trajectory.step = base64FromFloat64(Float64Array.of(4, 6, 5, 7))), 'branches[1].trajectory.step: steps must increase: entry 2 is 5 after 6'],
    ['trajectory column of the wrong length', (l) => (l.branches[1].trajectory.step = l.branches[0].checkpoints[0].state.optimizer.buffers.v), 'branches[1].trajectory.step: holds 5 numbers, expected 4'],
    ['trajectory layer column short', (l) => (l.branches[0].trajectory.layerUpdateRatio = 'AAAAAAAAAAA='), 'branches[0].trajectory.layerUpdateRatio: holds 1 numbers, expected 22'],
    ['malformed scalar', (l) => (l.branches[0].head.state.optimizer.scalars.prevLoss = 'f64:7ff'), 'branches[0].head.state.optimizer.scalars.prevLoss: expected a number or "f64:" + 16 hex digits, got "f64:7ff"'],
    ['missing top-level field', (l) => delete l.spec, "ledger: missing required field 'spec'"],
    ['missing nested field', (l) => delete l.branches[1].head.fingerprint, "branches[1].head: missing required field 'fingerprint'"],
    ['unknown field', (l) => (l.branches[0].colour = 'red'), "branches[0]: unknown field 'colour'"],
    ['wrong type', (l) => (l.seed = 'three'), 'seed: must be integer, got "three"'],
    ['spec edited by hand', (l) => (l.spec += '\n# edited'), 'specHash: does not match the SHA-256 of spec'],
    ['active branch missing', (l) => (l.activeBranch = 'nope'), "activeBranch: no branch is named 'nope' (branches: main, lower-lr)"],
    ['duplicate branch names', (l) => (l.branches[1].name = 'main'), "branches[1].name: 'main' is already the name of branches[0]"],
    ['unknown parent', (l) => (l.branches[1].parent.branch = 'ghost'), "branches[1].parent.branch: no branch is named 'ghost'"],
    ['fork beyond the parent head', (l) => (l.branches[1].parent.step = 50), "branches[1].parent.step: is 50, beyond the head (step 10) of branch 'main'"],
    ['no root branch', (l) => (l.branches[0].parent = { branch: 'lower-lr', step: 4 }), 'branches: no branch is a root'],
    ['a cursor without its checkpoint', (l) => (l.branches[1].cursor = 6), 'branches[1].cursor: no checkpoint is stored at step 6'],
    ['a cursor at the head', (l) => (l.branches[0].cursor = 10), 'branches[0].cursor: is 10, not before the head (step 10)'],
    ['a restart after step 0', (l) => (l.branches[1].restart = true), 'branches[1].restart: a branch that restarts forks at step 0, not step 4'],
    ['a patch on the root', (l) => (l.branches[0].patch = { lr: 1 }), 'branches[0].patch: the root branch runs the spec as written and has no patch'],
    ['a patch key that is no spec key', (l) => (l.branches[1].patch = { lrr: 1 }), "branches[1].patch: unknown key \"lrr\""],
    ['a forked trajectory that starts after the fork', (l) => (l.branches[1].parent.step = 3), 'branches[1].trajectory.step: the first record is step 4, after the fork step 3'],
    ['edited readouts', (l) => (l.branches[0].readouts.curvature.step = 9), 'branches[0].readouts.digest: does not match the readouts (they were edited or damaged)'],
    ['readouts without a step', (l) => delete l.branches[0].readouts.audit.step, "branches[0].readouts.audit: missing required field 'step'"],
  ])('%s', (_name, mutate, message) => {
    const errors = errorsOf(mutate);
    expect(errors.some((e) => e.includes(message))).toBe(true);
  });

  it.each<[string, unknown, string]>([
    ['a newer version', { ...ledgerJson(), version: 4 }, 'version: ledger version 4 is newer than this Stepwell, which reads versions 1 to 3; update the extension to open it'],
    ['version zero', { ...ledgerJson(), version: 0 }, 'version: expected a positive integer, got 0'],
    ['a version that is not a number', { ...ledgerJson(), version: '1' }, 'version: expected a positive integer, got "1"'],
    ['another format', { ...ledgerJson(), format: 'something-else' }, "format: expected 'stepwell-ledger', got \"something-else\" (this metadata was not written by Stepwell)"],
    ['a list', [1, 2], 'ledger: expected an object, got a list'],
    ['null', null, 'ledger: expected an object, got null'],
  ])('rejects %s', (_n, value, message) => {
    expect(validateLedger(value)).toEqual({ ok: false, errors: [message] });
  });

  it('reports several problems at once', () => {
    const errors = errorsOf((l) => {
      l.branches[0].checkpoints[0].state.params = 'A';
      l.branches[1].head.state.params = 'B';
    });
    expect(errors).toHaveLength(2);
  });
});

describe('recoverSpec', () => {
  it.each<[string, unknown, string | undefined]>([
    ['an intact ledger', ledgerJson(), SPEC],
    ['a ledger of an unknown version', { ...ledgerJson(), version: 9 }, SPEC],
    ['a ledger with broken branches', { spec: SPEC, branches: 'garbage' }, SPEC],
    ['a non-string spec', { spec: 42 }, undefined],
    ['not an object', 'hello', undefined],
  ])('from %s', (_n, value, expected) => {
    expect(recoverSpec(value)).toBe(expected);
  });
});

describe('migrateLedger: the version chain', () => {
  const v1 = () => ({ format: 'stepwell-ledger', version: 1, note: 'a' });
  it('returns a current ledger unchanged', () => {
    const v = { format: 'stepwell-ledger', version: 3, note: 'a' };
    expect(migrateLedger(v)).toEqual({ ok: true, value: v, fromVersion: 3 });
  });
  it('applies migrations in order when a newer version slots in', () => {
    const chain: Record<number, Migration> = {
      1: (v) => ({ ...v, version: 2, note: `${String(v.note)}b` }),
      2: (v) => ({ ...v, version: 3, note: `${String(v.note)}c` }),
    };
    const input = v1();
    const r = migrateLedger(input, chain, 3);
    expect(r).toEqual({ ok: true, value: { format: 'stepwell-ledger', version: 3, note: 'abc' }, fromVersion: 1 });
    expect(input.version).toBe(1);
  });
  it('says which migration is missing or broken', () => {
    expect(migrateLedger(v1(), {}, 2)).toEqual({ ok: false, errors: ['version: no migration from ledger version 1 to 2'] });
    expect(migrateLedger(v1(), { 1: (v) => v }, 2)).toEqual({ ok: false, errors: ['version: the migration from version 1 did not produce version 2'] });
    expect(migrateLedger(v1(), { 1: () => { throw new Error('boom'); } }, 2)).toEqual({ ok: false, errors: ['version: migrating from version 1 to 2 failed: boom'] });
  });
});

describe('validateLedger on randomly damaged text', () => {
  let seed = 777;
  const next = (n: number) => {
    seed = (Math.imul(seed, 1103515245) + 12345) >>> 0;
    return seed % n;
  };
  it('never throws and rejects every edit inside a base64 field', () => {
    const text = JSON.stringify(ledgerJson());
    const base64Spans = [...text.matchAll(/"([A-Za-z0-9+/]{16,}={0,2})"/g)].map((m) => [m.index! + 1, m.index! + 1 + m[1].length]);
    for (let k = 0; k < 150; k++) {
      const [a, b] = base64Spans[next(base64Spans.length)];
      const at = a + next(b - a);
      const replacement = 'ABCD+/=!'[next(8)];
      if (text[at] === replacement) continue;
      const damaged = text.slice(0, at) + replacement + text.slice(at + 1);
      const r = validateLedger(JSON.parse(damaged));
      expect(r.ok).toBe(false);
      if (!r.ok) expect(r.errors.every((e) => /^[\w[\].]+: /.test(e))).toBe(true);
    }
  });
});
