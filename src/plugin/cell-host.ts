/**
 * The {@link CellHost} over a JupyterLab code-cell model: the one door through which
 * Stepwell reads and writes a cell (source, our metadata key, outputs).
 */
import type { ICodeCellModel } from '@jupyterlab/cells';
import type { IDisplayData } from '@jupyterlab/nbformat';
import type { PartialJSONObject } from '@lumino/coreutils';
import type { CellHost } from '../ui/ports';
import { LEDGER_KEY } from '../ui/ledger-glue';
import type { CellSummary } from '../ui/summary';
import { STEPWELL_MIME } from '../ui/summary';

/** The output a stepwell cell carries: our live-widget type plus a markdown fallback. */
export function stepwellOutput(summary: CellSummary | null, markdown: string): IDisplayData {
  return {
    output_type: 'display_data',
    data: { [STEPWELL_MIME]: { version: 1, summary } as unknown as PartialJSONObject, 'text/markdown': markdown },
    metadata: {}
  };
}

/** True when an output is ours. */
export function isStepwellOutput(data: Readonly<Record<string, unknown>>): boolean {
  return STEPWELL_MIME in data;
}

/** Builds the cell host of a code-cell model. */
export function cellHost(model: ICodeCellModel): CellHost {
  return {
    readSource: () => model.sharedModel.getSource(),
    readLedger: (): unknown => model.getMetadata(LEDGER_KEY),
    writeLedger: (value: object) => model.setMetadata(LEDGER_KEY, value),
    writeOutputs: (summary, markdown) => {
      const output = stepwellOutput(summary, markdown);
      const outputs = model.outputs;
      // Replacing our single output in place lets the output area reuse the live widget.
      if (outputs.length === 1 && isStepwellOutput(outputs.get(0).data)) outputs.set(0, output);
      else {
        outputs.clear();
        outputs.add(output);
      }
    }
  };
}
