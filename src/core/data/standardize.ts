/**
 * Feature standardization with the training rows' statistics: x′ = (x − mean) / spread per input
 * column, mean and spread (population standard deviation, 1/N) taken over the training rows only;
 * held-out rows are transformed with the same numbers so no held-out information leaks into the
 * setup (common practice; LeCun et al., "Efficient BackProp", 1998, §4.3: inputs of zero mean and
 * equal variance).
 *
 * A constant column (every training value identical) has spread 0: it is centred but not divided
 * (divisor 1), so it becomes exactly 0 on the training rows, and held-out rows keep their offset
 * from the training value. Its index is listed in `constant`.
 */
import type { DataSetup, Standardization } from '../setup';

/** Per-column mean and population spread of a row-major `rows × width` matrix (two passes). */
export function columnMoments(x: Float64Array, rows: number, width: number): { mean: number[]; spread: number[]; constant: number[] } {
  if (!(rows > 0)) throw new RangeError(`column statistics need at least one row, got ${rows}`);
  const mean = new Array<number>(width).fill(0);
  const spread = new Array<number>(width).fill(0);
  const constant: number[] = [];
  for (let j = 0; j < width; j++) {
    let s = 0;
    let allSame = true;
    const first = x[j];
    for (let r = 0; r < rows; r++) {
      const v = x[r * width + j];
      s += v;
      if (v !== first) allSame = false;
    }
    if (allSame) {
      mean[j] = first;
      constant.push(j);
      continue;
    }
    const m = s / rows;
    let q = 0;
    for (let r = 0; r < rows; r++) {
      const d = x[r * width + j] - m;
      q += d * d;
    }
    mean[j] = m;
    spread[j] = Math.sqrt(q / rows);
  }
  return { mean, spread, constant };
}

/** Applies (x − mean) / divisor column by column, divisor = spread (1 for constant columns); returns a new array. */
function transform(x: Float64Array, rows: number, width: number, s: Standardization): Float64Array {
  const out = new Float64Array(rows * width);
  for (let r = 0; r < rows; r++) {
    for (let j = 0; j < width; j++) {
      const d = s.spread[j] > 0 ? s.spread[j] : 1;
      out[r * width + j] = (x[r * width + j] - s.mean[j]) / d;
    }
  }
  return out;
}

/**
 * The data set with standardized inputs (training statistics applied to both splits) and the
 * statistics recorded in `standardized`. Targets are unchanged. Standardizing an already
 * standardized data set returns it unchanged.
 */
export function standardizeData(data: DataSetup): DataSetup {
  if (data.standardized !== undefined) return data;
  const m = columnMoments(data.x, data.rows, data.inputs);
  const s: Standardization = { mean: m.mean, spread: m.spread, constant: m.constant };
  const out: DataSetup = { rows: data.rows, inputs: data.inputs, targets: data.targets, x: transform(data.x, data.rows, data.inputs, s), y: data.y, standardized: s };
  if (data.heldOut) out.heldOut = { rows: data.heldOut.rows, x: transform(data.heldOut.x, data.heldOut.rows, data.inputs, s), y: data.heldOut.y };
  return out;
}
