/**
 * Writes the version-2 ledger fixtures of this folder with the version-2 code, through the
 * worker's own protocol (the engine host in-process), so a later ledger version has real
 * version-2 ledgers to migrate. Run once: `npx tsx test/unit/ledger/v2/make_fixtures.ts`; do not
 * regenerate with newer code (README.md). Prints the fingerprints it records in README.md.
 */
import { writeFileSync } from 'fs';
import { join } from 'path';
import { EngineHost } from '../../../../src/worker/engine-host';
import { realCore } from '../../../../src/worker/core-adapter';
import type { EngineReply, EngineRequest } from '../../../../src/worker/protocol';

/** A request without its id (distributed over the union). */
type Ask = EngineRequest extends infer R ? (R extends { id: number } ? Omit<R, 'id'> : never) : never;

/** The spec (an invented scenario: dough proofing time from temperature, humidity and yeast share). */
const SPEC = `%%stepwell
# stepwell — dough proofing time (invented data), for the version-2 ledger fixtures
seed: 23
model:
  inputs: 3
  layers:
    - { units: 6, activation: tanh }
    - { units: 1 }
  init: lecun-normal
data:
  x: [[0.2, -0.4, 0.1], [-0.7, 0.3, 0.5], [0.9, 0.8, -0.2], [-0.1, -0.9, 0.7], [0.4, 0.1, -0.8], [-0.5, 0.6, 0.2], [0.7, -0.2, 0.9], [-0.3, -0.5, -0.6]]
  y: [0.31, -0.12, 0.77, -0.25, 0.40, 0.05, 0.62, -0.33]
  heldOut:
    x: [[0.1, 0.2, 0.3], [-0.6, -0.1, 0.4]]
    y: [0.20, -0.18]
loss: mse
recipe: { optimizer: sgd, lr: 0.3, momentum: 0.5, batch: 4 }
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
    process.stdout.write(`${file}: ${b.join('; ')}\n`);
  };
  await ask({ kind: 'load', specText: SPEC, checkpointEvery: 4 });
  await ask({ kind: 'step', n: 16, sharpnessEvery: 4 });
  await ask({ kind: 'curvature', k: 3, denseLimit: 500 });
  await ask({ kind: 'gradcheck', sample: 20 });
  await save('proofing-one-branch.json');
  // Every version-2 feature: a recipe branch forked at step 8, a restart (setup patch) at step 0,
  // a branch of a branch, and a cursor before the tip (steps kept after it).
  await ask({ kind: 'fork', step: 8, patch: { lr: 0.1 }, name: 'gentler' });
  await ask({ kind: 'step', n: 10, sharpnessEvery: 5 });
  await ask({ kind: 'fork', step: 0, patch: { 'model.init': 'glorot-uniform' }, name: 'glorot', from: 'main' });
  await ask({ kind: 'step', n: 12 });
  await ask({ kind: 'fork', step: 14, patch: { momentum: 0 }, name: 'gentler-plain', from: 'gentler' });
  await ask({ kind: 'step', n: 6 });
  await ask({ kind: 'switch', branch: 'main' });
  await ask({ kind: 'rewind', step: 10 });
  await save('proofing-branches.json');
}

void main();
