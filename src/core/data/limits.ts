/**
 * Size limits of the data readers, checked before anything proportional to the input is
 * allocated: a file that would exceed them is refused with a message naming the limit. They are
 * constants today; the plan is to make them settings (the notebook app's settings schema and a
 * CLI flag), passing a {@link DataLimits} to the readers.
 */

/** Limits a reader enforces. */
export interface DataLimits {
  /** Largest file accepted, in bytes. */
  maxBytes: number;
  /** Most data rows (examples) accepted. */
  maxRows: number;
  /** Most columns (CSV fields, or the second dimension of an array) accepted. */
  maxColumns: number;
  /** Most numbers one array may hold (rows × columns, or a weight tensor's size). */
  maxValues: number;
}

/** Default limits: generous for a proxy experiment that steps in a browser tab. */
export const DEFAULT_LIMITS: Readonly<DataLimits> = {
  maxBytes: 64 * 1024 * 1024,
  maxRows: 1_000_000,
  maxColumns: 10_000,
  maxValues: 8_000_000,
};
