/**
 * The constants of core's table-driven exp (`src/core/elementary/tables.ts`) against
 * decimal.js 10.6 at 80 digits: 2^(j/32) = POW2_HI + POW2_LO far beyond double precision, and
 * ln2/32 = STEP_HI + STEP_LO with STEP_HI short enough that k·STEP_HI is exact.
 */
import Decimal from 'decimal.js';
import * as table from '../../../src/core/elementary/tables';
import { decompose, exact } from './exact';

const D = Decimal.clone({ precision: 80 });
const ex = (x: number): InstanceType<typeof D> => exact(x, D);

describe('elementary tables', () => {
  it('holds 2^(j/32) in two parts to better than 2⁻¹⁰⁰ relative', () => {
    expect(table.POW2_HI).toHaveLength(table.EXP_TABLE_SIZE);
    expect(table.POW2_LO).toHaveLength(table.EXP_TABLE_SIZE);
    for (let j = 0; j < table.EXP_TABLE_SIZE; j++) {
      // source: decimal.js 10.6, 2^(j/32) at 80 significant digits
      const want = new D(2).pow(new D(j).div(32));
      const got = ex(table.POW2_HI[j]).plus(ex(table.POW2_LO[j]));
      expect(got.minus(want).abs().div(want).lt(new D(2).pow(-100))).toBe(true);
      // the high part is the double nearest 2^(j/32): the low part is at most half an ulp of it
      expect(Math.abs(table.POW2_LO[j])).toBeLessThanOrEqual(2 ** -53 * table.POW2_HI[j]);
    }
  });

  it('splits ln2/32 so that k·STEP_HI is exact for |k| < 2²¹', () => {
    // source: decimal.js 10.6, ln 2 at 80 significant digits
    const step = new D(2).ln().div(32);
    const got = ex(table.STEP_HI).plus(ex(table.STEP_LO));
    expect(got.minus(step).abs().div(step).lt(new D(2).pow(-80))).toBe(true);
    const { m } = decompose(table.STEP_HI);
    expect(m % 2n ** 21n).toBe(0n); // at most 32 significant bits
    expect(Math.abs(table.INV_STEP * table.STEP_HI - 1)).toBeLessThan(1e-9);
  });

  it('splits ln 2 so that k·LN2_HI is exact for |k| < 2¹¹', () => {
    // source: decimal.js 10.6, ln 2 at 80 significant digits
    const ln2 = new D(2).ln();
    const got = ex(table.LN2_HI).plus(ex(table.LN2_LO));
    expect(got.minus(ln2).abs().div(ln2).lt(new D(2).pow(-90))).toBe(true);
    const { m } = decompose(table.LN2_HI);
    expect(m % 2n ** 11n).toBe(0n); // at most 42 significant bits
  });
});
