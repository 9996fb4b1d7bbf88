/** A notebook cell as a plain object, and a controller over it with the real engine host in-process (for the controller tests). */
import { CellController } from '../../../src/ui/controller';
import type { CellHost, CellSettings, RecordCell } from '../../../src/ui/ports';
import { DEFAULT_SETTINGS } from '../../../src/ui/ports';
import { ledgerGlue } from '../../../src/ui/ledger-glue';
import { EngineClient } from '../../../src/worker/client';
import { inProcessPort } from '../../../src/worker/in-process';
import { realCore } from '../../../src/worker/core-adapter';
import type { EngineHost } from '../../../src/worker/engine-host';
import { parseSpec } from '../../../src/experiment';

/** The fake cell: source, metadata kept as JSON (as a notebook would), the record cell, and counters. */
export interface FakeCell extends CellHost {
  source: string;
  metadata: unknown;
  records: RecordCell[];
  /** Engines started by controllers of this cell. */
  engines: number;
}

/** A fake cell holding `source` (and a ledger, when given). */
export function fakeCell(source: string, metadata?: unknown): FakeCell {
  const cell: FakeCell = {
    source,
    metadata,
    records: [],
    engines: 0,
    cellId: () => 'cell-1',
    findRecord: () => (cell.records.length > 0 ? 1 : null),
    writeRecord: r => {
      cell.records = [JSON.parse(JSON.stringify(r))];
    },
    readSource: () => cell.source,
    readLedger: () => (cell.metadata === undefined ? undefined : JSON.parse(JSON.stringify(cell.metadata))),
    writeLedger: v => {
      cell.metadata = JSON.parse(JSON.stringify(v));
    },
    writeOutputs: () => undefined
  };
  return cell;
}

/** The in-process engine port a controller of {@link controllerOf} talks to. */
export type EnginePortOf = ReturnType<typeof inProcessPort>;

/**
 * A controller of `cell` whose engines are in-process hosts with `options`; `wrap` may watch or
 * alter a port's messages before the engine client gets it.
 */
export function controllerOf(
  cell: FakeCell,
  settings: Partial<CellSettings> = {},
  options: EngineHost.Options = {},
  wrap: (port: EnginePortOf) => EnginePortOf = port => port
): CellController {
  return new CellController({
    host: cell,
    engine: () => {
      cell.engines++;
      return new EngineClient(wrap(inProcessPort(realCore, options)));
    },
    ledger: ledgerGlue,
    checkSpec: text => {
      const r = parseSpec(text);
      return r.ok ? [] : r.errors;
    },
    settings: () => ({ ...DEFAULT_SETTINGS, ...settings }),
    imageOf: async () => ({ mime: 'image/png', data: 'iVBORw0KGgo=' })
  });
}
