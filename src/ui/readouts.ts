/**
 * The readout panels other than the loss trace, as functions from plain data to DOM.
 * They show numbers the engine computed; nothing is recomputed here.
 */
import type { AuditResult } from '../core/probe/gradcheck';
import type { Generalization } from '../core/probe/generalization';
import type { CurvatureResult, DerivedReadouts, SharpnessPoint } from '../worker/protocol';
import { el, textTable } from './dom';
import { auditRows, fmt } from './summary';

/** CSS class names of the readouts. */
export namespace ReadoutClass {
  export const table = 'sw-Table';
  export const note = 'sw-Note';
  export const verdict = 'sw-Verdict';
}

/**
 * The note that a readout describes another step than the one the branch is at (after
 * stepping, going to another step or switching branch), or null when it is current.
 */
export function staleNote(measuredAt: number, currentStep: number, again: string): HTMLElement | null {
  if (measuredAt === currentStep) return null;
  return el('p', 'sw-Stale', `Measured at step ${measuredAt}; the branch is now at step ${currentStep}. ${again} to measure here.`);
}

/** The gradient-audit table: one row per parameter block, then the step-size sweep. */
export function auditPanel(audit: { step: number; result: AuditResult } | null, onRun: () => void, busy: boolean, currentStep: number): HTMLElement {
  const box = el('div', 'sw-Readout');
  const run = el('button', 'jp-Button sw-Button', audit === null ? 'Run gradient audit' : 'Run again');
  run.type = 'button';
  run.disabled = busy;
  run.title = 'Compare the exact gradient with central differences at the current parameters';
  run.addEventListener('click', onRun);
  box.appendChild(run);
  if (audit === null) {
    box.appendChild(
      el('p', ReadoutClass.note, 'Compares the exact gradient with central finite differences on sampled entries.')
    );
    return box;
  }
  const r = audit.result;
  const rows = auditRows(r);
  const stale = staleNote(audit.step, currentStep, 'Run again');
  if (stale !== null) box.appendChild(stale);
  box.appendChild(
    el(
      'p',
      ReadoutClass.note,
      `At step ${audit.step}: ${r.checked} of ${r.parameterCount} entries ${r.sampled ? '(a seeded sample) ' : ''}checked ` +
        `with difference step h = ${r.h.toExponential(0)}; overall ${r.verdict}, worst relative error ${r.maxRelError.toExponential(2)}.`
    )
  );
  box.appendChild(
    textTable(
      `${ReadoutClass.table} sw-AuditTable`,
      ['layer', 'checked', 'max rel. error', 'median rel. error', 'worst entry', 'verdict'],
      rows.map(x => [x.name, x.checked, x.max, x.median, x.worst, x.verdict]),
      i => `${ReadoutClass.verdict}-${rows[i].verdict}`
    )
  );
  if (r.sweep.length > 0) {
    box.appendChild(
      textTable(
        `${ReadoutClass.table} sw-SweepTable`,
        ['h', 'max rel. error', 'median rel. error'],
        r.sweep.map(p => [p.h.toExponential(0), p.maxRelError.toExponential(2), p.medianRelError.toExponential(2)])
      )
    );
    box.appendChild(
      el(
        'p',
        ReadoutClass.note,
        'If the error falls as h shrinks and then rises again, the remaining error is round-off, not a wrong derivative.'
      )
    );
  }
  box.appendChild(
    el(
      'p',
      ReadoutClass.note,
      'Relative error |a − n| / max(|a|, |n|) below 1e-7: right; up to 1e-4: acceptable; up to 1e-2: suspicious ' +
        '(acceptable near kinks such as ReLU at 0); above 1e-2: wrong. Thresholds from the Stanford CS231n notes on gradient checking.'
    )
  );
  return box;
}

/** How the trace was obtained, in words (readouts stored before `traceMethod` existed carry only the standard error). */
function traceHow(s: CurvatureResult['summary']): string {
  const method = (s.traceMethod as CurvatureResult['summary']['traceMethod'] | undefined) ?? (s.traceStandardError ? 'hutchinson' : 'exact');
  if (method === 'hutchinson') return "Hutchinson's estimate ± its standard error";
  if (s.method === 'dense') return 'sum of the full spectrum';
  return s.kind === 'hessian'
    ? 'exact, by two backward passes per output: every activation is piecewise linear, so the Hessian’s diagonal is the Gauss–Newton one'
    : 'exact, by two backward passes per output';
}

/**
 * The numbers derived from the spectrum, one per row with how each was obtained (the condition
 * number's definition in words rather than packed into one line).
 */
function derivedNumbers(s: CurvatureResult['summary']): HTMLElement {
  const rows: string[][] = [];
  rows.push(['condition number κ', s.conditionNumber !== null ? fmt(s.conditionNumber) : 'not available', s.conditionNote]);
  if (s.negativeShare !== null) {
    rows.push(['share of negative eigenvalues', `${(100 * s.negativeShare).toFixed(1)} %`, s.negativeShareMethod === 'slq' ? 'estimated by stochastic Lanczos quadrature' : `counted in the full spectrum, below −${s.cutoff}·max|λ|`]);
  }
  if (s.trace !== null) rows.push(['trace tr(H)', `${fmt(s.trace)}${s.traceStandardError ? ` ± ${fmt(s.traceStandardError)}` : ''}`, traceHow(s)]);
  return textTable(`${ReadoutClass.table} sw-DerivedTable`, ['quantity', 'value', 'how'], rows);
}

/**
 * Held-out against training loss (when the data have a held-out split): where the held-out loss
 * was lowest, where it is now, and the gap. The numbers are the worker's `generalization`.
 */
export function generalizationNote(g: Generalization | null): HTMLElement | null {
  if (g === null) return null;
  const rise = Number.isFinite(g.riseSinceBest) ? `${fmt(100 * g.riseSinceBest)} %` : fmt(g.riseSinceBest);
  const rows = [
    ['lowest held-out loss', `step ${g.best.step}`, fmt(g.best.heldOut), fmt(g.best.train)],
    ['now', `step ${g.last.step}`, fmt(g.last.heldOut), fmt(g.last.train)]
  ];
  const box = el('div', 'sw-Generalization');
  box.appendChild(textTable(`${ReadoutClass.table} sw-GeneralizationTable`, ['', 'at', 'held-out loss', 'training loss'], rows));
  box.appendChild(el('p', ReadoutClass.note,
    g.stepsSinceBest === 0 ? 'The held-out loss is at its lowest so far.'
      : `The held-out loss is ${rise} above its lowest, ${g.stepsSinceBest} steps later; the training loss ${g.trainFellSinceBest ? 'fell' : 'did not fall'} meanwhile.`));
  return box;
}

/**
 * The curvature readout: λmax and the recipe's stability limit, the spectrum's ends and the
 * derived numbers, computed by the engine at one step. `plot` receives the figure.
 */
export function curvaturePanel(
  c: CurvatureResult | null,
  sharpness: readonly SharpnessPoint[],
  actions: { measure: () => void; track: () => void; trackSteps: number },
  busy: boolean,
  plots: { spectrum: HTMLElement; history: HTMLElement },
  currentStep: number,
  trace: DerivedReadouts['sharpness']
): HTMLElement {
  const box = el('div', 'sw-Readout');
  const buttons = el('div', 'sw-Controls');
  const run = el('button', 'jp-Button sw-Button sw-Button-curvature', c === null ? 'Measure curvature' : 'Measure again');
  run.type = 'button';
  run.disabled = busy;
  run.title = 'Compute the extreme Hessian eigenvalues at the current weights (exact Hessian-vector products)';
  run.addEventListener('click', actions.measure);
  const track = el('button', 'jp-Button sw-Button sw-Button-track', `Step ×${actions.trackSteps} tracking λmax`);
  track.type = 'button';
  track.disabled = busy;
  track.title = 'Step N times (N from the Step ×N box) and measure the sharpness about 50 times on the way';
  track.addEventListener('click', actions.track);
  buttons.append(run, track);
  box.appendChild(buttons);
  if (sharpness.length > 0) {
    // The verdict and its sentence are core's (core/probe/curvature/verdicts.ts), sent by the worker.
    if (trace.sentence !== '') box.appendChild(el('p', `sw-Stability ${trace.verdict.kind === 'crossed' ? 'sw-mod-unstable' : ''}`.trim(), trace.sentence));
    plots.history.setAttribute('role', 'img');
    plots.history.setAttribute('aria-label', `Sharpness at ${sharpness.length} measured steps against the stability limit of the learning rate in effect (dashed line).`);
    box.appendChild(plots.history);
  }
  if (c === null) {
    box.appendChild(
      el(
        'p',
        ReadoutClass.note,
        'Computes the largest and smallest Hessian eigenvalues at the current weights (the full Hessian for small ' +
          'models, Lanczos otherwise) and compares the sharpness with the stability limit of the step size.'
      )
    );
    return box;
  }
  const s = c.summary;
  const st = s.stability;
  const stale = staleNote(c.step, currentStep, 'Measure again');
  if (stale !== null) box.appendChild(stale);
  const head = el(
    'p',
    'sw-CurvatureHead',
    c.partial === true
      ? `At step ${c.step}, top end: λmax = ${fmt(s.lambdaMax)} (± ${s.lambdaMaxBound.toExponential(1)}) — Lanczos over ${c.parameterCount} parameters, ${c.products} Hessian-vector products so far. ` +
          'Still measuring: the smallest eigenvalues, the spectral density and the trace.'
      : `At step ${c.step}: λmax = ${fmt(s.lambdaMax)} (± ${s.lambdaMaxBound.toExponential(1)})` +
        (s.lambdaMin !== null ? `, λmin = ${fmt(s.lambdaMin)}` : '') +
        ` — ${c.method === 'dense' ? 'full Hessian' : 'Lanczos'} over ${c.parameterCount} parameters, ${c.products} Hessian-vector products` +
        (c.threads !== undefined && c.threads > 1 ? ` on ${c.threads} threads` : '') +
        (c.fused === true ? ', with fused multiply-add' : '') +
        (c.stop !== 'converged' ? ` (stopped: ${c.stop})` : '') + '.'
  );
  if (c.partial === true) head.dataset.partial = 'true';
  box.appendChild(head);
  box.appendChild(el('p', `sw-Stability ${c.verdict === 'unstable' ? 'sw-mod-unstable' : ''}`.trim(), c.sentence));
  if (st.note) box.appendChild(el('p', ReadoutClass.note, `${st.note} (operator: ${s.stepMetric}).`));
  plots.spectrum.setAttribute('role', 'img');
  plots.spectrum.setAttribute('aria-label', `The ${c.top.length} largest and ${c.bottom.length} smallest Hessian eigenvalues at step ${c.step}, with the stability limit on λ as a dashed line.`);
  box.appendChild(plots.spectrum);
  const rows: string[][] = [];
  c.top.forEach((v, i) => rows.push([`top ${i + 1}`, fmt(v), c.topBounds[i]?.toExponential(1) ?? '—']));
  c.bottom.forEach((v, i) => rows.push([`bottom ${i + 1}`, fmt(v), c.bottomBounds[i]?.toExponential(1) ?? '—']));
  box.appendChild(textTable(`${ReadoutClass.table} sw-SpectrumTable`, ['eigenvalue', 'λ', '± bound'], rows));
  // The derived numbers need the bottom end, the density or the trace: they come with the complete readout.
  if (c.partial !== true) box.appendChild(derivedNumbers(s));
  box.appendChild(el('p', ReadoutClass.note, s.caveat));
  return box;
}
