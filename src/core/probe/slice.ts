/**
 * The plane readout: the loss over w + α·d1 + β·d2 on a grid, with d1, d2 either two
 * filter-normalized random directions (Li et al., NeurIPS 2018) or the top two Hessian
 * eigenvectors, and the branch's trajectory projected onto that plane (least squares; the
 * distance of each point from the plane is kept, since a 2-D picture of a P-dimensional path
 * leaves most of it out).
 */
import type { Objective, Rows } from '../objective';
import type { Rng } from '../rng';
import { filterNormalizedDirection, projectOntoPlane, topEigendirections } from './directions';
import { runUnits, UnitTask } from './unit-task';

/** How the two directions were chosen. */
export type PlaneKind = 'random' | 'eigenvectors';

/** The loss over a plane through the current weights. */
export interface PlaneReadout {
  step: number;
  kind: PlaneKind;
  /** Grid coordinates along d1 (α) and d2 (β). */
  alpha: number[];
  beta: number[];
  /** loss[j][i] = f(w + alpha[i]·d1 + beta[j]·d2) (rows follow β, as a contour plot wants). */
  loss: number[][];
  /** Lengths ‖d1‖, ‖d2‖ (eigenvectors are unit; filter-normalized directions have the weights' scale). */
  norms: [number, number];
  /** Eigenvalues of d1 and d2 when they are eigenvectors. */
  eigenvalues?: [number, number];
  /** The trajectory's points (as given) in plane coordinates, with their distance from the plane. */
  path: { steps: number[]; alpha: number[]; beta: number[]; offPlane: number[] };
  /** Loss evaluations the grid used. */
  evaluations: number;
}

/** Options of {@link planeReadout}. */
export interface PlaneOptions {
  rows?: Rows;
  /** Grid points per axis (default 21). */
  points?: number;
  /** Half-width of the grid in units of each direction (default 1; with eigenvectors: the trajectory's extent, at least 1e-3). */
  span?: number;
  /** Called after each grid row, with rows done and rows in all; return false to stop (the readout is then not returned). */
  onRow?: (done: number, total: number) => boolean;
}

/** The two directions of a plane (see {@link planeReadout}). */
export function planeDirections(objective: Objective, w: Float64Array, kind: PlaneKind, rng: Rng, rows?: Rows): { d1: Float64Array; d2: Float64Array; eigenvalues?: [number, number] } {
  if (kind === 'random') {
    return { d1: filterNormalizedDirection(objective.blocks, w, rng.fork('d1')), d2: filterNormalizedDirection(objective.blocks, w, rng.fork('d2')) };
  }
  if (w.length < 2) throw new RangeError('a plane of eigenvectors needs at least 2 parameters');
  const top = topEigendirections(objective, w, 2, rng.fork('lanczos'), rows);
  if (top.length < 2) throw new RangeError(`Lanczos found ${top.length} eigenvector(s); a plane needs two`);
  return { d1: top[0].vector, d2: top[1].vector, eigenvalues: [top[0].value, top[1].value] };
}

/**
 * f over the grid w + α·d1 + β·d2, α, β ∈ [−span, span], and `path` (weights at `steps`)
 * projected onto the plane. Returns null when `onRow` asked to stop.
 */
export function planeReadout(objective: Objective, w: Float64Array, step: number, kind: PlaneKind, d: { d1: Float64Array; d2: Float64Array; eigenvalues?: [number, number] },
  path: { steps: number[]; weights: readonly Float64Array[] }, options: PlaneOptions = {}): PlaneReadout | null {
  return runUnits(planeTask(objective, w, step, kind, d, path, options), options.onRow);
}

/** The plane readout as a resumable task of one grid row per unit (the worker runs it in slices); a stopped task's result is null. */
export function planeTask(objective: Objective, w: Float64Array, step: number, kind: PlaneKind, d: { d1: Float64Array; d2: Float64Array; eigenvalues?: [number, number] },
  path: { steps: number[]; weights: readonly Float64Array[] }, options: Omit<PlaneOptions, 'onRow'> = {}): UnitTask<PlaneReadout | null> {
  const points = options.points ?? 21;
  if (!Number.isInteger(points) || points < 3 || points > 201) throw new RangeError(`points must be an integer from 3 to 201, got ${points}`);
  if (path.steps.length !== path.weights.length) throw new RangeError(`path has ${path.steps.length} steps but ${path.weights.length} weight vectors`);
  const { d1, d2 } = d;
  const projected = projectOntoPlane(w, d1, d2, path.weights);
  const reach = Math.max(1e-3, ...projected.alpha.map(Math.abs), ...projected.beta.map(Math.abs)) * 1.25;
  const span = options.span ?? (kind === 'random' ? 1 : reach);
  if (!(span > 0) || !Number.isFinite(span)) throw new RangeError(`span must be a positive number, got ${span}`);
  const axis = Array.from({ length: points }, (_, i) => -span + (2 * span * i) / (points - 1));
  const x = new Float64Array(w.length);
  const loss: number[][] = [];
  const norm = (v: Float64Array): number => Math.sqrt(v.reduce((s, e) => s + e * e, 0));
  return new UnitTask<PlaneReadout | null>(points, (j) => {
    const row: number[] = [];
    for (let i = 0; i < points; i++) {
      const a = axis[i];
      const b = axis[j];
      for (let k = 0; k < w.length; k++) x[k] = w[k] + a * d1[k] + b * d2[k];
      row.push(objective.value(x, options.rows));
    }
    loss.push(row);
    return true;
  }, (stopped) => {
    if (stopped) return null;
    const out: PlaneReadout = {
      step, kind, alpha: axis, beta: axis.slice(), loss, norms: [norm(d1), norm(d2)],
      path: { steps: path.steps.slice(), ...projected }, evaluations: points * points,
    };
    if (d.eigenvalues) out.eigenvalues = d.eigenvalues;
    return out;
  });
}
