/** Number formatting shared by the figures, the cell and the command line's reports. */

/** Formats a loss or norm for display: 6 significant digits, `NaN`/`∞` spelled out. */
export function fmt(v: number | null | undefined): string {
  if (v === null || v === undefined) return '—';
  if (Number.isNaN(v)) return 'NaN';
  if (!Number.isFinite(v)) return v > 0 ? '∞' : '−∞';
  if (v !== 0 && (Math.abs(v) < 1e-3 || Math.abs(v) >= 1e6)) return v.toExponential(3);
  return String(Number(v.toPrecision(6)));
}
