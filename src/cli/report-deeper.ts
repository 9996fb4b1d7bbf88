/**
 * The report's figures of the deeper readouts a branch keeps (line profile along the update,
 * 2-D slice, range test, batch sizes), each titled with the step and branch it was taken at
 * and marked when the branch has moved since. The numbers are the stored ones; nothing is
 * recomputed.
 */
import type { DecodedBranch } from '../ledger';
import { deeperFromLedger } from '../core/probe/deeper-kept';
import { batchFigure, lineFigure, planeFigure, rangeFigure } from '../figures/deeper';
import { IMAGE_THEME, type Figure } from '../figures/trace';
import { renderSvg } from '../figures/svg';
import type { ReportFigure } from './report-model';

/** The figures of the deeper readouts `b` keeps (none when it keeps none). */
export function deeperReportFigures(stem: string, b: DecodedBranch): ReportFigure[] {
  const kept = deeperFromLedger(b.readouts.deeper);
  const out: ReportFigure[] = [];
  const add = (key: string, what: string, step: number, fig: Figure): void => {
    const title = what;
    const stale = step === b.cursor ? '' : ` The branch is now at step ${b.cursor}.`;
    const text = `Branch ${b.name}, taken at step ${step}.${stale}`;
    const name = `${stem}-${key}`;
    // the figure's own title (line profiles) is replaced by the report's, which names step and branch
    out.push({ name, title, text, svg: renderSvg({ ...fig, layout: { ...fig.layout, title: undefined, height: Math.max(fig.layout.height, 280) } }, { id: name, title, description: text, width: 760 }) });
  };
  if (kept.line) add('line', 'Loss along the update', kept.line.step, lineFigure(kept.line.result.update, IMAGE_THEME, ''));
  if (kept.plane) add('plane', `Loss over a plane (${kept.plane.result.kind === 'random' ? 'filter-normalized random directions' : 'top two eigenvectors'})`, kept.plane.step, planeFigure(kept.plane.result, IMAGE_THEME));
  if (kept.range) add('range', 'Learning-rate range test', kept.range.step, rangeFigure(kept.range.result, IMAGE_THEME));
  if (kept.batch) add('batch', 'Batch sizes by examples seen', kept.batch.step, batchFigure(kept.batch.result, IMAGE_THEME));
  return out;
}
