/**
 * Scenarios of our own for the findings tests (demo data, never expected values): a kiln whose
 * fired-strength index depends on furnace temperature, humidity and dwell time, and a seed-sorting
 * classifier over seed length and mass. Specs are YAML text so proposals can be applied with
 * `patchExperiment` exactly as `stepwell run --branch` applies them.
 */
import { Rng } from '../../../src/core/rng';
import { parseSpec } from '../../../src/experiment';
import { patchExperiment } from '../../../src/experiment/patch';
import { Grove } from '../../../src/core/session';
import type { Experiment } from '../../../src/core/setup';
import type { Proposal } from '../../../src/core/probe/findings';

const r4 = (x: number): number => Math.round(x * 1e4) / 1e4;

/** Kiln rows: raw (°C, share, hours) or already centred and scaled by hand. */
export function kilnRows(rows: number, seed: number, scaled: boolean, noise = 0.05): { x: number[][]; y: number[] } {
  const rng = Rng.fromSeed(seed);
  const x: number[][] = [];
  const y: number[] = [];
  for (let r = 0; r < rows; r++) {
    const t = 800 + 40 * rng.normal();
    const h = 0.3 + 0.05 * rng.normal();
    const d = 2 + rng.normal();
    const zt = (t - 800) / 40, zh = (h - 0.3) / 0.05, zd = d - 2;
    x.push(scaled ? [r4(zt), r4(zh), r4(zd)] : [r4(t), r4(h), r4(d)]);
    y.push(r4(Math.tanh(zt - 0.5 * zh) + 0.3 * zd + noise * rng.normal()));
  }
  return { x, y };
}

/** Options of {@link kilnSpec}. */
export interface KilnOptions {
  rows?: number;
  scaled?: boolean;
  standardize?: boolean;
  layers?: string;
  model?: string;
  recipe?: string;
  duplicate?: boolean;
  heldOut?: number;
  noise?: number;
  seed?: number;
}

/** A kiln regression spec (3 inputs → layers → 1 output, MSE). */
export function kilnSpec(o: KilnOptions = {}): string {
  const d = kilnRows(o.rows ?? 48, 1, o.scaled ?? true, o.noise);
  if (o.duplicate) {
    d.x = [...d.x, ...d.x];
    d.y = [...d.y, ...d.y];
  }
  const held = o.heldOut ? kilnRows(o.heldOut, 2, o.scaled ?? true, o.noise) : null;
  return [
    `seed: ${o.seed ?? 3}`,
    'model:',
    '  inputs: 3',
    `  layers: ${o.layers ?? '[{ units: 12, activation: tanh }, { units: 1 }]'}`,
    ...(o.model ? [o.model] : ['  init: lecun-normal']),
    'data:',
    ...(o.standardize ? ['  standardize: true'] : []),
    `  x: ${JSON.stringify(d.x)}`,
    `  y: ${JSON.stringify(d.y)}`,
    ...(held ? ['  heldOut:', `    x: ${JSON.stringify(held.x)}`, `    y: ${JSON.stringify(held.y)}`] : []),
    `recipe: ${o.recipe ?? '{ optimizer: sgd, lr: 0.05 }'}`,
    '',
  ].join('\n');
}

/** Seed-sorting rows: length (mm) and mass (mg), three varieties, standardized by hand. */
export function seedRows(rows: number, seed: number): { x: number[][]; y: number[] } {
  const rng = Rng.fromSeed(seed);
  const centres = [[-1, -0.5], [1, -0.5], [0, 1.2]];
  const x: number[][] = [];
  const y: number[] = [];
  for (let r = 0; r < rows; r++) {
    const c = r % 3;
    x.push([r4(centres[c][0] + 0.5 * rng.normal()), r4(centres[c][1] + 0.5 * rng.normal())]);
    y.push(c);
  }
  return { x, y };
}

/** A seed-sorting classifier spec (2 inputs → ReLU layer → 3 logits, cross-entropy). */
export function seedSpec(o: { model?: string; recipe?: string; units?: number } = {}): string {
  const d = seedRows(36, 5);
  return [
    'seed: 9',
    'model:',
    '  inputs: 2',
    `  layers: [{ units: ${o.units ?? 8}, activation: relu }, { units: 3 }]`,
    o.model ?? '  init: he-normal',
    'loss: cross-entropy',
    'data:',
    `  x: ${JSON.stringify(d.x)}`,
    `  y: ${JSON.stringify(d.y)}`,
    `recipe: ${o.recipe ?? '{ optimizer: sgd, lr: 0.1 }'}`,
    '',
  ].join('\n');
}

/** The experiment of a spec text (throws on spec errors). */
export function experimentOf(text: string): Experiment {
  const r = parseSpec(text);
  if (!r.ok) throw new Error(r.errors.map((e) => e.message).join('\n'));
  return r.experiment;
}

/**
 * Applies a proposal as a branch, as the cell and `stepwell run --branch` do: patch the spec text,
 * validate, fork the main branch at `atStep`, step both to `steps`. Returns both trajectories'
 * training (and held-out) losses at `steps`.
 */
export function tryProposal(text: string, proposal: Proposal, steps: number): { failing: number; fixed: number; heldFailing?: number; heldFixed?: number } {
  const grove = Grove.create(experimentOf(text));
  grove.step('main', steps);
  const patched = patchExperiment(text, proposal.set);
  if (!patched.ok) throw new Error(patched.errors.map((e) => e.message).join('\n'));
  grove.fork('main', proposal.atStep, 'proposal', patched.experiment, proposal.set);
  grove.step('proposal', steps - proposal.atStep);
  const main = grove.trajectory('main');
  const fixed = grove.trajectory('proposal');
  const a = main[main.length - 1];
  const b = fixed[fixed.length - 1];
  return { failing: a.loss, fixed: b.loss, heldFailing: a.heldOutLoss, heldFixed: b.heldOutLoss };
}
