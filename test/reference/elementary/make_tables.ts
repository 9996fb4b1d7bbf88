/**
 * Writes src/core/elementary/tables.ts: the constants of core's table-driven exp and expm1 and of
 * its log and log1p,
 * computed with decimal.js 10.6 at 80 significant digits and rounded to double by the exact
 * decimal → binary conversion of the JavaScript parser (ECMA-262 §7.1.4.1.1, correctly rounded).
 *
 * Run: `npx tsx test/reference/elementary/make_tables.ts`
 */
import * as fs from 'fs';
import * as path from 'path';
import Decimal from 'decimal.js';
import { exact } from './exact';

const D = Decimal.clone({ precision: 80 });
/** The exact value of a double (≤ 80 digits suffice for the short significands used here). */
const ex = (x: number): InstanceType<typeof D> => exact(x, D);
const N = 32;
/** A double from a decimal: the parser rounds the 60-digit text correctly. */
const dbl = (x: InstanceType<typeof D>): number => Number(x.toString());

const ln2 = new D(2).ln();
const step = ln2.div(N);
// L1: ln2/32 with its last 21 significand bits cleared, so k·L1 is exact for |k| < 2^21.
const stepD = dbl(step);
const scale = 2 ** (Math.floor(Math.log2(stepD)) - 31);
const L1 = Math.round(stepD / scale) * scale; // 32 significant bits
const L2 = dbl(step.minus(ex(L1)));
// ln 2 with its last 11 significand bits cleared, so k·LN2_HI is exact for |k| < 2¹¹.
const ln2D = dbl(ln2);
const ln2Scale = 2 ** (Math.floor(Math.log2(ln2D)) - 41);
const LN2_HI = Math.round(ln2D / ln2Scale) * ln2Scale; // 42 significant bits
const LN2_LO = dbl(ln2.minus(ex(LN2_HI)));
const hi: number[] = [];
const lo: number[] = [];
for (let j = 0; j < N; j++) {
  const s = new D(2).pow(new D(j).div(N));
  const h = dbl(s);
  hi.push(h);
  lo.push(dbl(s.minus(ex(h))));
}
const fmt = (xs: number[]): string => xs.map((x) => `  ${x === 0 ? '0' : x.toString()},`).join('\n');
const text = `/**
 * Constants of the table-driven exp and expm1 (\`exp.ts\`) and of log and log1p (\`log.ts\`),
 * written by \`npx tsx test/reference/elementary/make_tables.ts\` from decimal.js at 80 digits;
 * checked against decimal.js again by \`test/reference/elementary/tables.test.ts\`. Do not edit by hand.
 */

/** ln 2 in two parts: LN2_HI has 42 significant bits, so k·LN2_HI is exact for |k| < 2¹¹. */
export const LN2_HI = ${LN2_HI};
/** ln 2 − LN2_HI, rounded to double. */
export const LN2_LO = ${LN2_LO};

/** Table size: x = (32m + j)·ln2/32 + r. */
export const EXP_TABLE_SIZE = ${N};
/** 32/ln 2, rounded (any nearby value works: it only picks k). */
export const INV_STEP = ${dbl(new D(N).div(ln2))};
/** ln2/32 in two parts: STEP_HI has 32 significant bits, so k·STEP_HI is exact for |k| < 2²¹. */
export const STEP_HI = ${L1};
/** ln2/32 − STEP_HI, rounded to double. */
export const STEP_LO = ${L2};
/** 2^(j/32) rounded to double, j = 0…31. */
export const POW2_HI = Float64Array.from([
${fmt(hi)}
]);
/** 2^(j/32) − POW2_HI[j], rounded to double. */
export const POW2_LO = Float64Array.from([
${fmt(lo)}
]);
`;
fs.writeFileSync(path.resolve(__dirname, '..', '..', '..', 'src', 'core', 'elementary', 'tables.ts'), text);
console.log('wrote src/core/elementary/tables.ts');
