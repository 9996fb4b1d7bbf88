/**
 * The readout panels other than the loss trace, as functions from plain data to DOM.
 * They show numbers the engine computed; nothing is recomputed here.
 */
import type { StepRecord } from '../core/state';
import type { AuditResult } from '../core/probe/gradcheck';
import type { CurvatureResult, SharpnessPoint } from '../worker/protocol';
import { el, textTable } from './dom';
import { auditRows, fmt } from './summary';

/** CSS class names of the readouts. */
export namespace ReadoutClass {
  export const table = 'sw-Table';
  export const note = 'sw-Note';
  export const verdict = 'sw-Verdict';
}

/**
 * Per-layer numbers of the latest step: ‖W‖, ‖∇W‖ and the update ratio ‖ΔW‖/‖W‖.
 */
export function layersPanel(last: StepRecord | undefined): HTMLElement {
  const box = el('div', 'sw-Readout');
  if (last === undefined || last.layers.length === 0) {
    box.appendChild(
      el('p', ReadoutClass.note, last === undefined ? 'No session yet.' : 'This objective has no layers.')
    );
    return box;
  }
  if (last.step === 0) {
    box.appendChild(el('p', ReadoutClass.note, 'Take a step: the per-layer numbers describe an update.'));
  }
  const rows = last.layers.map(l => [String(l.layer), fmt(l.weightNorm), fmt(l.gradNorm), fmt(l.updateRatio)]);
  box.appendChild(textTable(ReadoutClass.table, ['layer', '‖W‖', '‖∇W‖', '‖ΔW‖ / ‖W‖'], rows));
  box.appendChild(
    el(
      'p',
      ReadoutClass.note,
      `Step ${last.step}. The update ratio is often healthy near 1e-3 (a rule of thumb): far above, the step is ` +
        'large for that layer; far below, the layer barely moves. Activation health is coming in a later version.'
    )
  );
  return box;
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
  currentStep: number
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
    const crossed = sharpness.find(p => p.limit !== null && p.sharpness > p.limit);
    box.appendChild(
      el(
        'p',
        `sw-Stability ${crossed ? 'sw-mod-unstable' : ''}`.trim(),
        crossed
          ? `The sharpness crossed the stability limit at step ${crossed.step} (${fmt(crossed.sharpness)} > ${fmt(crossed.limit)}).`
          : `Over ${sharpness.length} measurements (steps ${sharpness[0].step}–${sharpness[sharpness.length - 1].step}) the sharpness stayed below the stability limit.`
      )
    );
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
  box.appendChild(
    el(
      'p',
      'sw-CurvatureHead',
      `At step ${c.step}: λmax = ${fmt(s.lambdaMax)} (± ${s.lambdaMaxBound.toExponential(1)})` +
        (s.lambdaMin !== null ? `, λmin = ${fmt(s.lambdaMin)}` : '') +
        ` — ${c.method === 'dense' ? 'full Hessian' : 'Lanczos'} over ${c.parameterCount} parameters, ${c.products} Hessian-vector products` +
        (c.threads !== undefined && c.threads > 1 ? ` on ${c.threads} threads` : '') +
        (c.stop !== 'converged' ? ` (stopped: ${c.stop})` : '') + '.'
    )
  );
  const verdict =
    st.margin === null ? 'the rule does not apply to this optimizer'
      : st.margin < 1 ? 'stable on the local quadratic model'
        : 'UNSTABLE on the local quadratic model: the sharpest directions grow each step';
  const stability = el(
    'p',
    `sw-Stability ${st.margin !== null && st.margin >= 1 ? 'sw-mod-unstable' : ''}`.trim(),
    st.largestStableLr === null
      ? `Step-size limit: ${verdict}.`
      : `η = ${fmt(st.lr)}; limit ${st.formula} → largest stable η ≈ ${fmt(st.largestStableLr)}; ` +
          `η / limit = ${fmt(st.margin)}: ${verdict}.`
  );
  box.appendChild(stability);
  if (st.note) box.appendChild(el('p', ReadoutClass.note, `${st.note} (operator: ${s.stepMetric}).`));
  plots.spectrum.setAttribute('role', 'img');
  plots.spectrum.setAttribute('aria-label', `The ${c.top.length} largest and ${c.bottom.length} smallest Hessian eigenvalues at step ${c.step}, with the stability limit on λ as a dashed line.`);
  box.appendChild(plots.spectrum);
  const rows: string[][] = [];
  c.top.forEach((v, i) => rows.push([`top ${i + 1}`, fmt(v), c.topBounds[i]?.toExponential(1) ?? '—']));
  c.bottom.forEach((v, i) => rows.push([`bottom ${i + 1}`, fmt(v), c.bottomBounds[i]?.toExponential(1) ?? '—']));
  box.appendChild(textTable(`${ReadoutClass.table} sw-SpectrumTable`, ['eigenvalue', 'λ', '± bound'], rows));
  const extra: string[] = [];
  extra.push(s.conditionNumber !== null ? `condition number ${fmt(s.conditionNumber)} (${s.conditionNote})` : `condition number: ${s.conditionNote}`);
  if (s.negativeShare !== null) extra.push(`negative share ${(100 * s.negativeShare).toFixed(1)} %`);
  if (s.trace !== null) extra.push(`trace ${fmt(s.trace)}${s.traceStandardError ? ` ± ${fmt(s.traceStandardError)}` : ''}`);
  box.appendChild(el('p', ReadoutClass.note, extra.join(' · ')));
  box.appendChild(el('p', ReadoutClass.note, s.caveat));
  return box;
}
