/** Test helper: a version-2 ledger of one branch built from a host snapshot (what a saved notebook holds). */
import { buildLedger } from '../../../src/ledger';
import { TEMPLATE_SPEC } from '../../../src/experiment';
import type { EngineReply } from '../../../src/worker/protocol';
import type { StepRecord } from '../../../src/core/state';

type Snapshot = Extract<EngineReply, { kind: 'snapshot' }>;

/** The ledger of `snap`'s branch with the given records and checkpoints (all by default). */
export function ledgerOf(snap: Snapshot, parts: { trajectory?: StepRecord[]; checkpoints?: number[]; spec?: string } = {}): object {
  const keep = parts.checkpoints;
  return JSON.parse(JSON.stringify(buildLedger({
    engine: 'stepwell test',
    spec: parts.spec ?? TEMPLATE_SPEC,
    seed: 7,
    parameterCount: snap.summary.parameterCount,
    branches: [{
      name: 'main',
      trajectory: parts.trajectory ?? snap.trajectory,
      checkpoints: snap.checkpoints.filter(c => c.step < snap.state.step && (keep === undefined || keep.includes(c.step))).map(c => c.state),
      head: snap.state
    }],
    activeBranch: 'main',
    savedAt: '2026-01-01T00:00:00.000Z',
    limits: { maxCheckpoints: 1000, maxRecords: 100000 }
  })));
}
