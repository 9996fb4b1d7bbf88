/**
 * Writes the version-3 ledger fixtures of this folder with the version-3 code, through the
 * worker's own protocol (the engine host in-process), so a later ledger version has real
 * version-3 ledgers to migrate: findings tagged per branch, the diagnosis readouts (activation
 * health, initialization and data checks, the gradient noise scale) beside the curvature, the
 * sharpness trace and the audit, and a branch made from a finding's proposal as "Try as branch"
 * makes it. Run once: `npx tsx test/unit/ledger/v3/make_fixtures.ts`; do not regenerate with
 * newer code (README.md). Prints the fingerprints and findings it records in README.md.
 */
import { writeFileSync } from 'fs';
import { join } from 'path';
import { EngineHost } from '../../../../src/worker/engine-host';
import { realCore } from '../../../../src/worker/core-adapter';
import type { EngineReply, EngineRequest, Finding } from '../../../../src/worker/protocol';

/** A request without its id (distributed over the union). */
type Ask = EngineRequest extends infer R ? (R extends { id: number } ? Omit<R, 'id'> : never) : never;

/**
 * The spec (an invented scenario: the drying time of a glaze from kiln temperature, humidity and
 * coat thickness), with a learning rate far above its stability limit so findings fire.
 */
const SPEC = `%%stepwell
# stepwell — glaze drying time (invented data), for the version-3 ledger fixtures
seed: 31
model:
  inputs: 3
  layers:
    - { units: 5, activation: tanh }
    - { units: 1 }
  init: lecun-normal
data:
  x: [[0.3, -0.2, 0.5], [-0.6, 0.4, 0.1], [0.8, 0.7, -0.3], [-0.2, -0.8, 0.6], [0.5, 0.2, -0.7], [-0.4, 0.5, 0.3], [0.6, -0.3, 0.8], [-0.1, -0.6, -0.5], [0.2, 0.9, 0.4], [-0.9, 0.1, -0.2]]
  y: [0.42, -0.21, 0.66, -0.30, 0.35, 0.02, 0.71, -0.38, 0.25, -0.55]
  heldOut:
    x: [[0.1, 0.3, 0.2], [-0.5, -0.2, 0.4]]
    y: [0.18, -0.27]
loss: mse
recipe: { optimizer: sgd, lr: 2.5, batch: full }
`;

async function main(): Promise<void> {
  const replies: EngineReply[] = [];
  const host = new EngineHost(realCore, (r) => replies.push(structuredClone(r)));
  let id = 0;
  const ask = async (req: Ask): Promise<EngineReply> => {
    const n = ++id;
    await host.receive({ ...req, id: n } as EngineRequest);
    const r = replies.filter((x) => x.id === n && x.kind !== 'progress').pop();
    if (r === undefined || r.kind === 'failed' || r.kind === 'spec-errors' || r.kind === 'patch-errors') throw new Error(`request ${req.kind} failed: ${JSON.stringify(r)}`);
    return r;
  };
  const save = async (file: string): Promise<void> => {
    const r = await ask({ kind: 'ledger', specText: SPEC, checkpointCap: 6 });
    if (r.kind !== 'ledger') throw new Error('no ledger');
    const value: Record<string, unknown> = { ...(r.value as Record<string, unknown>), savedAt: '2026-12-03T00:00:00.000Z' };
    writeFileSync(join(__dirname, file), JSON.stringify(value, null, 1) + '\n');
    const b = (value.branches as { name: string; head: { step: number; fingerprint: string }; cursor?: number }[]).map((x) => `${x.name}@${x.head.step}${x.cursor !== undefined ? ` (cursor ${x.cursor})` : ''} ${x.head.fingerprint}`);
    const f = (value.findings as { branch: string; id: string }[]).map((x) => `${x.branch}:${x.id}`);
    process.stdout.write(`${file}: ${b.join('; ')}\n  findings: ${f.join(', ')}\n`);
  };
  await ask({ kind: 'load', specText: SPEC, checkpointEvery: 4 });
  const stepped = await ask({ kind: 'step', n: 12, sharpnessEvery: 1 });
  await ask({ kind: 'curvature', k: 3, denseLimit: 500 });
  await ask({ kind: 'gradcheck', sample: 20 });
  const noise = await ask({ kind: 'noise', sample: 10 });
  if (stepped.kind !== 'stepped' || noise.kind !== 'noise') throw new Error('unexpected replies');
  const findings: Finding[] = noise.readouts.findings;
  if (findings.length === 0) throw new Error('no findings fired: the fixture would not exercise version 3');
  await save('glaze-one-branch.json');
  // "Try as branch" on the first finding with a proposal: a fork at its step with its keys.
  const tried = findings.find((f) => f.proposal !== null);
  if (tried === undefined || tried.proposal === null) throw new Error(`no finding proposes a change: ${findings.map((f) => f.id).join(', ')}`);
  await ask({ kind: 'fork', step: tried.proposal.atStep, patch: tried.proposal.set });
  await ask({ kind: 'step', n: 12, sharpnessEvery: 4 });
  // A restart with setup keys (an initialization far below the fan-in rule, so this branch has a
  // finding of its own), stepped, and the root shown again before its tip.
  await ask({ kind: 'fork', step: 0, patch: { 'model.init': 'glorot-uniform', 'model.gain': 0.1, lr: 0.2 }, name: 'small-init', from: 'main' });
  await ask({ kind: 'step', n: 8 });
  await ask({ kind: 'switch', branch: 'main' });
  await ask({ kind: 'rewind', step: 9 });
  await save('glaze-branches.json');
}

void main();
