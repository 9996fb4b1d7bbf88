/**
 * The invented scenarios of the demo notebooks: seeded data generators and spec text.
 * Nothing here comes from an outside data set; every row is drawn from our own generator.
 */
import { Rng } from '../src/core/rng';

/** Rounds to 3 decimals for compact, readable spec text. */
const r3 = (x: number): number => Math.round(x * 1000) / 1000;

/** Rows of a data set, ready for YAML flow lists. */
export interface Rows {
  x: number[][];
  y: number[];
}

/**
 * Greenhouse humidity-sensor calibration: a capacitive sensor's raw reading drifts with
 * board temperature; the target is the reference hygrometer's relative humidity. All three
 * are scaled to about −1…1 (raw reading, temperature) and 0…1 (humidity).
 */
export function greenhouseRows(seed: number, rows: number): Rows {
  const rng = Rng.fromSeed(seed).fork('greenhouse');
  const x: number[][] = [];
  const y: number[] = [];
  for (let i = 0; i < rows; i++) {
    const raw = 2 * rng.uniform() - 1;
    const temp = 2 * rng.uniform() - 1;
    // Made-up sensor physics: a saturating response whose gain sags as the board warms.
    const rh = 0.5 + 0.42 * Math.tanh(1.3 * raw) * (1 - 0.18 * temp) - 0.06 * temp + 0.015 * rng.normal();
    x.push([r3(raw), r3(temp)]);
    y.push(r3(rh));
  }
  return { x, y };
}

/**
 * Parcel sorting at a depot: three chutes (0 flats, 1 small parcels, 2 bulky items) from a
 * parcel's scanned weight, longest side and thickness (each standardized).
 */
export function parcelRows(seed: number, rows: number): Rows {
  const rng = Rng.fromSeed(seed).fork('parcels');
  const centres = [
    [-1.0, 0.2, -1.1],
    [0.0, -0.4, 0.3],
    [1.1, 0.9, 0.8]
  ];
  const x: number[][] = [];
  const y: number[] = [];
  for (let i = 0; i < rows; i++) {
    const chute = i % 3;
    const c = centres[chute];
    x.push(c.map(m => r3(m + 0.45 * rng.normal())));
    y.push(chute);
  }
  return { x, y };
}

/** YAML flow list of rows, `perLine` rows per line (compact enough to read the spec around it). */
export function yamlFlowRows(x: number[][], indent: string, perLine: number): string {
  const row = (r: number[]): string => `[${r.map(v => (v >= 0 ? ' ' : '') + v.toFixed(3)).join(', ')}]`;
  const lines: string[] = [];
  for (let i = 0; i < x.length; i += perLine) lines.push(x.slice(i, i + perLine).map(row).join(', '));
  return `[${lines.join(`,\n${indent}`)}]`;
}

/** YAML flow list of targets, wrapped at ten per line. */
export function yamlTargets(y: number[], indent: string, digits: number): string {
  const parts: string[] = [];
  for (let i = 0; i < y.length; i += 10) parts.push(y.slice(i, i + 10).map(v => v.toFixed(digits)).join(', '));
  return `[${parts.join(`,\n${indent}`)}]`;
}

/** Spec of the humidity-sensor calibration with a given step size. */
export function greenhouseSpec(lr: number, train: Rows, held: Rows, note: string): string {
  return `%%stepwell
# stepwell — greenhouse humidity-sensor calibration (invented data)
# ${note}
seed: 11
model:
  inputs: 2                 # raw capacitance reading, board temperature (scaled to -1..1)
  layers:
    - { units: 8, activation: tanh }
    - { units: 1, activation: linear }
  init: lecun-normal
data:
  x: ${yamlFlowRows(train.x, '     ', 5)}
  y: ${yamlTargets(train.y, '     ', 3)}
  heldOut:
    x: ${yamlFlowRows(held.x, '       ', 5)}
    y: ${yamlTargets(held.y, '       ', 3)}
loss: mse
recipe:
  optimizer: sgd
  lr: ${lr}
  batch: full
`;
}

/** Spec of the parcel sorter with a given initialization gain. */
export function parcelSpec(gain: number, train: Rows, held: Rows, note: string): string {
  return `%%stepwell
# stepwell — depot parcel sorter (invented data)
# ${note}
seed: 5
model:
  inputs: 3                 # weight, longest side, thickness (standardized)
  layers:
    - { units: 12, activation: tanh }
    - { units: 12, activation: tanh }
    - { units: 12, activation: tanh }
    - { units: 3, activation: linear }   # one logit per chute
  init: lecun-normal
  gain: ${gain}
data:
  x: ${yamlFlowRows(train.x, '     ', 4)}
  y: ${yamlTargets(train.y, '     ', 0)}     # chute: 0 flats, 1 small parcels, 2 bulky
  heldOut:
    x: ${yamlFlowRows(held.x, '       ', 4)}
    y: ${yamlTargets(held.y, '       ', 0)}
loss: cross-entropy
recipe:
  optimizer: sgd
  lr: 0.3
  batch: 30
`;
}
