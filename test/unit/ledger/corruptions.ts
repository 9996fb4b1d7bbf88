/**
 * Corruptions of real ledgers (written by Stepwell's own code: the version-2 fixtures, the demo
 * notebooks, and one written here through the engine host), each a pure edit of a deep copy with
 * the field and message the opener must report. Where a hand edit would be caught by an integrity
 * check first (fingerprint, digest, spec hash), the edit recomputes it, so the deeper check is
 * what must catch it — the way a deliberate forger would work.
 */
import { readFileSync } from 'fs';
import { join } from 'path';
import { fingerprintState } from '../../../src/core/session';
import type { SessionState } from '../../../src/core/state';
import { base64FromFloat64, decodeSessionState, decodeTrajectory, encodeSessionState, encodeTrajectory, sha256Hex } from '../../../src/ledger';

/** A ledger as plain JSON. */
export type Raw = Record<string, unknown> & { branches: RawBranch[] };
export interface RawBranch {
  name: string;
  parent?: { branch: string; step: number };
  patch?: Record<string, unknown>;
  trajectory: Record<string, unknown>;
  checkpoints: RawCheckpoint[];
  head: RawCheckpoint;
  cursor?: number;
}
export interface RawCheckpoint {
  step: number;
  fingerprint: string;
  state: Record<string, unknown> & { optimizer: { kind: string; t: number; buffers: Record<string, string>; scalars: Record<string, unknown> }; rng: { s: number[]; spare: unknown }; order: string | null; params: string };
}

/** One corruption: what it does, the edit, and what the opener must say. */
export interface Corruption {
  name: string;
  /** Applies to the ledger when true (e.g. row-order edits need mini-batches). */
  applies?: (l: Raw) => boolean;
  /** Edits the copy in place, or returns a value to store instead. */
  edit: (l: Raw) => unknown;
  /** The located field the first matching problem must have. */
  field: RegExp;
  /** Its detail. */
  detail: RegExp;
  /** The branch the problem must name, when it is about a branch ('first' = the first branch with a saved state edited). */
  branch?: (l: Raw) => string;
  /** The saved state's step the problem must name. */
  step?: (l: Raw) => number;
}

/** The sources: name and raw ledger. */
export function sources(): { name: string; raw: Raw }[] {
  const out: { name: string; raw: Raw }[] = [];
  for (const f of ['proofing-branches.json', 'proofing-one-branch.json']) out.push({ name: `v2/${f}`, raw: JSON.parse(readFileSync(join(__dirname, 'v2', f), 'utf8')) as Raw });
  for (const f of ['greenhouse-humidity-sensor.ipynb', 'parcel-sorter-plateau.ipynb']) {
    const nb = JSON.parse(readFileSync(join(__dirname, '../../../demo-notebooks', f), 'utf8')) as { cells: { metadata?: { stepwell?: Raw } }[] };
    nb.cells.forEach((c, i) => {
      if (c.metadata?.stepwell) out.push({ name: `${f}#${i}`, raw: c.metadata.stepwell });
    });
  }
  return out;
}

/** Decodes, edits and re-encodes a saved state, with a fresh fingerprint. */
export function editState(l: Raw, c: RawCheckpoint, fn: (s: SessionState) => void): void {
  const s = decodeSessionState(c.state, 'state', l.parameterCount as number);
  fn(s);
  c.state = encodeSessionState(s) as unknown as RawCheckpoint['state'];
  c.step = s.step;
  c.fingerprint = fingerprintState(s);
}

/** Re-encodes a branch's trajectory after `fn` edits its records (digest recomputed). */
function editTrajectory(b: RawBranch, fn: (r: ReturnType<typeof decodeTrajectory>) => ReturnType<typeof decodeTrajectory>): void {
  b.trajectory = encodeTrajectory(fn(decodeTrajectory(b.trajectory))) as unknown as Record<string, unknown>;
}

/** Replaces the spec and recomputes its hash. */
function setSpec(l: Raw, spec: string): void {
  l.spec = spec;
  l.specHash = sha256Hex(spec);
}

const head = (l: Raw): RawCheckpoint => l.branches[0].head;
const firstNonHead = (l: Raw): RawCheckpoint => l.branches[0].checkpoints[l.branches[0].checkpoints.length - 1];
const minibatch = (l: Raw): boolean => l.branches[0].head.state.order !== null;
const hasBuffers = (l: Raw): boolean => Object.keys(l.branches[0].head.state.optimizer.buffers).length > 0;
const withCheckpoints = (l: Raw): boolean => l.branches[0].checkpoints.length > 0;
const forked = (l: Raw): RawBranch | undefined => l.branches.find((b) => b.parent !== undefined && b.parent.step > 0 && !('restart' in b));
const rowsOf = (l: Raw): number => decodeSessionState(head(l).state, 'state', l.parameterCount as number).order?.length ?? 0;
const main = (l: Raw): string => l.branches[0].name;
const headStep = (l: Raw): number => head(l).step;
const lastCheckpointStep = (l: Raw): number => firstNonHead(l).step;

/** Every corruption. */
export const CORRUPTIONS: Corruption[] = [
  // Items of issue 11: accepted before.
  { name: 'a seed other than the spec\'s', edit: (l) => { l.seed = (l.seed as number) + 1; }, field: /^seed$/, detail: /but the spec says seed: / },
  {
    name: 'the spec\'s seed changed, spec hash recomputed',
    edit: (l) => setSpec(l, (l.spec as string).replace(/^seed: *(\d+)/m, (_m, d: string) => `seed: ${Number(d) + 1}`)),
    field: /^seed$/, detail: /but the spec says seed: /
  },
  {
    name: 'an all-zero generator state (fingerprint recomputed)',
    edit: (l) => { head(l).state.rng.s = [0, 0, 0, 0]; refingerprintRaw(l, head(l)); },
    field: /head\.state\.rng\.s$/, detail: /all zero/, branch: main, step: headStep
  },
  {
    name: 'a NaN spare normal (fingerprint recomputed)',
    edit: (l) => { head(l).state.rng.spare = 'f64:7ff8000000000000'; refingerprintRaw(l, head(l)); },
    field: /head\.state\.rng\.spare$/, detail: /always a finite number/, branch: main, step: headStep
  },
  {
    name: 'an infinite spare normal (fingerprint recomputed)',
    edit: (l) => { head(l).state.rng.spare = 'f64:7ff0000000000000'; refingerprintRaw(l, head(l)); },
    field: /head\.state\.rng\.spare$/, detail: /always a finite number/, branch: main, step: headStep
  },
  {
    name: 'a __proto__ key among the optimizer buffers',
    edit: (l) => { Object.defineProperty(head(l).state.optimizer.buffers, '__proto__', { value: base64FromFloat64(new Float64Array(3)), enumerable: true, writable: true, configurable: true }); },
    field: /head\.state\.optimizer\.buffers/, detail: /'__proto__'/, branch: main, step: headStep
  },
  {
    name: 'a __proto__ key among the optimizer scalars',
    edit: (l) => { Object.defineProperty(head(l).state.optimizer.scalars, '__proto__', { value: 1, enumerable: true, writable: true, configurable: true }); },
    field: /head\.state\.optimizer\.scalars/, detail: /'__proto__'/, branch: main, step: headStep
  },
  {
    name: 'a constructor key among the optimizer scalars',
    edit: (l) => { (head(l).state.optimizer.scalars as Record<string, unknown>)['constructor'] = 2; },
    field: /head\.state\.optimizer\.scalars/, detail: /'constructor'/, branch: main, step: headStep
  },
  {
    name: 'a prototype key among the optimizer buffers',
    edit: (l) => { head(l).state.optimizer.buffers.prototype = base64FromFloat64(new Float64Array(1)); },
    field: /head\.state\.optimizer\.buffers/, detail: /'prototype'/, branch: main, step: headStep
  },
  // Items of issue 12: accepted at open, failing at the first Step or Rewind.
  {
    name: 'the parameter count changed consistently (every state one weight longer, fingerprints recomputed)',
    edit: (l) => {
      const p = l.parameterCount as number;
      for (const b of l.branches) for (const c of [...b.checkpoints, b.head]) {
        const s = decodeSessionState(c.state, 'state', p);
        s.params = Float64Array.from([...s.params, 0.5]);
        for (const k of Object.keys(s.optimizer.buffers)) if (s.optimizer.buffers[k].length === p) s.optimizer.buffers[k] = Float64Array.from([...s.optimizer.buffers[k], 0]);
        c.state = encodeSessionState(s) as unknown as RawCheckpoint['state'];
        c.fingerprint = fingerprintState(s);
      }
      l.parameterCount = p + 1;
    },
    field: /^parameterCount$/, detail: /the spec makes \d+ parameters, but the ledger stores \d+/
  },
  {
    name: 'a different network (one more hidden unit), spec hash recomputed',
    edit: (l) => setSpec(l, (l.spec as string).replace(/units: *(\d+)/, (_m, d: string) => `units: ${Number(d) + 1}`)),
    field: /^parameterCount$/, detail: /the spec makes \d+ parameters/
  },
  {
    name: 'a different activation (same parameter count), spec hash recomputed',
    applies: (l) => /activation: *tanh/.test(l.spec as string),
    edit: (l) => setSpec(l, (l.spec as string).replace(/activation: *tanh/, 'activation: sigmoid')),
    field: /^branches\[0\]\.trajectory\.loss$/, detail: /record 0 holds the loss .* but the spec's model, data and loss give/
  },
  {
    name: 'a different data row, spec hash recomputed',
    applies: (l) => /y: *\[ *-?0?\.\d/.test(l.spec as string),
    edit: (l) => setSpec(l, (l.spec as string).replace(/y: *\[ *(-?0?\.\d+)/, (_m, v: string) => `y: [${Number(v) + 3}`)),
    field: /trajectory\.loss$/, detail: /record 0 holds the loss/
  },
  {
    name: 'another initialization scheme, spec hash recomputed',
    applies: (l) => /init: *(lecun-normal|he-normal)/.test(l.spec as string),
    edit: (l) => setSpec(l, (l.spec as string).replace(/init: *(lecun-normal|he-normal)/, 'init: glorot-uniform')),
    field: /^branches\[0\]\.checkpoints\[0\]\.state$/, detail: /differs from the step-0 state the spec draws \(weights/, branch: main, step: () => 0
  },
  {
    name: 'step-0 weights changed (fingerprint recomputed)',
    applies: withCheckpoints,
    edit: (l) => editState(l, l.branches[0].checkpoints[0], (s) => { s.params[0] += 0.25; }),
    field: /^branches\[0\]\.checkpoints\[0\]\.state$/, detail: /weights, by up to/, branch: main, step: () => 0
  },
  {
    name: 'step-0 generator moved (fingerprint recomputed)',
    applies: withCheckpoints,
    edit: (l) => editState(l, l.branches[0].checkpoints[0], (s) => { s.rng.s[0] = (s.rng.s[0] ^ 1) >>> 0; }),
    field: /^branches\[0\]\.checkpoints\[0\]\.state$/, detail: /batch generator/, branch: main, step: () => 0
  },
  {
    name: 'the trajectory ends before the head (digest recomputed)',
    edit: (l) => editTrajectory(l.branches[0], (r) => r.slice(0, -1)),
    field: /^branches\[0\]\.trajectory$/, detail: /ends at step \d+, before the head/, branch: main
  },
  {
    name: 'an optimizer kind that does not match the recipe, at the head',
    edit: (l) => editState(l, head(l), (s) => { s.optimizer.kind = s.optimizer.kind === 'adam' ? 'sgd' : 'adam'; }),
    field: /head\.state\.optimizer\.kind$/, detail: /but this branch's recipe runs/, branch: main, step: headStep
  },
  {
    name: 'an optimizer kind that does not match the recipe, at a checkpoint before the head',
    applies: withCheckpoints,
    edit: (l) => editState(l, firstNonHead(l), (s) => { s.optimizer.kind = 'rmsprop'; }),
    field: /checkpoints\[\d+\]\.state\.optimizer\.kind$/, detail: /is 'rmsprop', but this branch's recipe runs/, branch: main, step: lastCheckpointStep
  },
  {
    name: 'a shortened optimizer buffer',
    applies: hasBuffers,
    edit: (l) => editState(l, head(l), (s) => { const k = Object.keys(s.optimizer.buffers)[0]; s.optimizer.buffers[k] = s.optimizer.buffers[k].slice(0, -1); }),
    field: /head\.state\.optimizer\.buffers\.\w+$/, detail: /holds \d+ numbers, but .* keeps \d+/, branch: main, step: headStep
  },
  {
    name: 'a missing optimizer buffer',
    applies: hasBuffers,
    edit: (l) => editState(l, head(l), (s) => { delete s.optimizer.buffers[Object.keys(s.optimizer.buffers)[0]]; }),
    field: /head\.state\.optimizer\.buffers$/, detail: /has no buffer '\w+'/, branch: main, step: headStep
  },
  {
    name: 'an optimizer buffer the recipe does not keep',
    edit: (l) => editState(l, head(l), (s) => { s.optimizer.buffers.extra = new Float64Array(4); }),
    field: /head\.state\.optimizer\.buffers\.extra$/, detail: /is not a buffer of/, branch: main, step: headStep
  },
  {
    name: 'an optimizer scalar the recipe does not keep',
    edit: (l) => editState(l, head(l), (s) => { s.optimizer.scalars.surprise = 1; }),
    field: /head\.state\.optimizer\.scalars$/, detail: /holds .*surprise/, branch: main, step: headStep
  },
  {
    name: 'an optimizer counting more updates than steps',
    edit: (l) => editState(l, head(l), (s) => { s.optimizer.t = s.step + 5; }),
    field: /head\.state\.optimizer\.t$/, detail: /counts \d+ updates, more than the \d+ steps taken/, branch: main, step: headStep
  },
  {
    name: 'more epochs than steps',
    edit: (l) => editState(l, head(l), (s) => { s.epoch = s.step + 1; }),
    field: /head\.state\.epoch$/, detail: /more passes over the data than/, branch: main, step: headStep
  },
  {
    name: 'a row order entry out of range',
    applies: minibatch,
    edit: (l) => editState(l, head(l), (s) => { (s.order as Int32Array)[1] = (s.order as Int32Array).length; }),
    field: /head\.state\.order$/, detail: /entry 1 is row \d+, outside 0…\d+/, branch: main, step: headStep
  },
  {
    name: 'a negative row order entry',
    applies: minibatch,
    edit: (l) => editState(l, head(l), (s) => { (s.order as Int32Array)[0] = -3; }),
    field: /head\.state\.order$/, detail: /entry 0 is row -3/, branch: main, step: headStep
  },
  {
    name: 'a duplicated row in the order',
    applies: minibatch,
    edit: (l) => editState(l, head(l), (s) => { const o = s.order as Int32Array; o[1] = o[0]; }),
    field: /head\.state\.order$/, detail: /repeats row/, branch: main, step: headStep
  },
  {
    name: 'a row order one row short',
    applies: minibatch,
    edit: (l) => editState(l, head(l), (s) => { s.order = (s.order as Int32Array).slice(0, -1); }),
    field: /head\.state\.order$/, detail: /must hold a permutation of the \d+ training rows/, branch: main, step: headStep
  },
  {
    name: 'no row order for mini-batches',
    applies: minibatch,
    edit: (l) => editState(l, head(l), (s) => { s.order = null; }),
    field: /head\.state\.order$/, detail: /got none/, branch: main, step: headStep
  },
  {
    name: 'a row order in a full-batch state',
    applies: (l) => !minibatch(l),
    edit: (l) => editState(l, head(l), (s) => { s.order = Int32Array.from([0]); }),
    field: /head\.state\.order$/, detail: /runs full batches/, branch: main, step: headStep
  },
  {
    name: 'an epoch position beyond the rows',
    applies: minibatch,
    edit: (l) => editState(l, head(l), (s) => { s.cursor = rowsOf(l); }),
    field: /head\.state\.cursor$/, detail: /beyond the \d+ rows of an epoch/, branch: main, step: headStep
  },
  {
    name: 'an epoch position in a full-batch state',
    applies: (l) => !minibatch(l),
    edit: (l) => editState(l, head(l), (s) => { s.cursor = 3; }),
    field: /head\.state\.cursor$/, detail: /always at position 0/, branch: main, step: headStep
  },
  {
    name: 'a branch cursor beyond its head',
    edit: (l) => { l.branches[0].cursor = head(l).step + 3; },
    field: /^branches\[0\]\.cursor$/, detail: /not before the head/, branch: main
  },
  {
    name: 'a branch cursor where no state is saved',
    applies: (l) => head(l).step >= 2 && !l.branches[0].checkpoints.some((c) => c.step === head(l).step - 1),
    edit: (l) => { l.branches[0].cursor = head(l).step - 1; },
    field: /^branches\[0\]\.cursor$/, detail: /no checkpoint is stored at step/, branch: main
  },
  {
    name: 'a fork whose weights are not its parent\'s at the fork step (fingerprint recomputed)',
    applies: (l) => forked(l) !== undefined,
    edit: (l) => { const b = forked(l) as RawBranch; editState(l, b.checkpoints[0], (s) => { s.params[1] -= 0.5; }); },
    field: /^branches\[\d+\]\.checkpoints\[0\]\.state\.params$/, detail: /differs from the weights of branch '.+' at the fork step/, branch: (l) => (forked(l) as RawBranch).name
  },
  // Integrity and structure (already refused before this work; kept so they stay refused).
  { name: 'a hand-edited fingerprint', edit: (l) => { head(l).fingerprint = '0'.repeat(64); }, field: /head\.fingerprint$/, detail: /does not match the state/, branch: main, step: headStep },
  { name: 'an edited loss without its digest', edit: (l) => { l.branches[0].trajectory.digest = 'f'.repeat(64); }, field: /trajectory\.digest$/, detail: /does not match the columns/, branch: main },
  { name: 'an edited spec without its hash', edit: (l) => { l.spec = `${l.spec as string}\n# edited`; }, field: /^specHash$/, detail: /does not match the SHA-256 of spec/ },
  { name: 'an active branch that does not exist', edit: (l) => { l.activeBranch = 'nowhere'; }, field: /^activeBranch$/, detail: /no branch is named 'nowhere'/ },
  { name: 'two branches with one name', applies: (l) => l.branches.length > 1, edit: (l) => { l.branches[1].name = l.branches[0].name; }, field: /^branches\[1\]\.name$/, detail: /is already the name of/ },
  { name: 'a ledger version from the future', edit: (l) => { l.version = 99; }, field: /^version$/, detail: /newer than this Stepwell/ },
  { name: 'a foreign format', edit: (l) => { l.format = 'something-else'; }, field: /^format$/, detail: /not written by Stepwell/ },
  { name: 'weights that are not base64', edit: (l) => { head(l).state.params = '%%%not base64%%%'; }, field: /head\.state\.params$/, detail: /./, branch: main },
  { name: 'checkpoint steps out of order', applies: (l) => l.branches[0].checkpoints.length >= 2, edit: (l) => { const c = l.branches[0].checkpoints; [c[0], c[1]] = [c[1], c[0]]; }, field: /checkpoints\[1\]\.step$/, detail: /steps must increase/, branch: main },
  {
    name: 'a spec that no longer parses, hash recomputed',
    edit: (l) => setSpec(l, `${l.spec as string}\nrecipe: [unclosed\n`),
    field: /^spec$/, detail: /the saved spec no longer parses/
  },
  {
    name: 'a patch that no longer validates',
    applies: (l) => l.branches.some((b) => b.patch !== undefined && 'lr' in b.patch),
    edit: (l) => { (l.branches.find((b) => b.patch !== undefined && 'lr' in b.patch) as RawBranch).patch = { lr: -1 }; },
    field: /^branches\[\d+\]\.patch$/, detail: /no longer validates against the spec/
  },
  { name: 'a parent step beyond the parent\'s head', applies: (l) => forked(l) !== undefined, edit: (l) => { (forked(l) as RawBranch).parent = { branch: main(l), step: head(l).step + 100 }; }, field: /parent\.step$/, detail: /beyond the head/ },
  { name: 'the ledger is a list', edit: (l) => [l], field: /^ledger$/, detail: /expected an object, got a list/ }
];

/** Recomputes a raw checkpoint's fingerprint from its (possibly corrupt) encoded state, bypassing the decoder's refusals. */
function refingerprintRaw(l: Raw, c: RawCheckpoint): void {
  const st = c.state;
  const clean = { ...st, rng: { s: [1, 2, 3, 4], spare: null } };
  const s = decodeSessionState(clean, 'state', l.parameterCount as number);
  const spare = st.rng.spare;
  s.rng = { s: st.rng.s as [number, number, number, number], spare: spare === null ? null : typeof spare === 'number' ? spare : new DataView(Uint8Array.from((spare as string).slice(4).match(/../g) as string[], (h) => parseInt(h, 16)).buffer).getFloat64(0) };
  c.fingerprint = fingerprintState(s);
}

