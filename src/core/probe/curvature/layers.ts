/**
 * Per-layer sharpness: the top eigenvalue of each layer's diagonal Hessian block H_ll (weight and
 * bias of one layer), by Lanczos on v_l ↦ (H·[0 … v_l … 0])_l — one full product per step with v
 * zero outside the block, keeping only the block of the output. Shows which layer limits the step.
 *
 * By Cauchy interlacing every diagonal block's λmax is at most the full λmax (Horn & Johnson,
 * *Matrix Analysis*, 2nd ed., thm. 4.3.28), so the layer with the largest value is the tightest.
 */
import type { Objective, ParamBlock, Rows } from '../../objective';
import type { Rng } from '../../rng';
import type { IterationControl, StopReason } from '../../linalg/operator';
import { reportProgress, stopRequested } from '../../linalg/operator';
import { lanczosExtremes } from '../../linalg/lanczos';
import type { CurvatureKind } from './operator';

/** One layer's block sharpness. */
export interface LayerSharpness {
  /** Layer index (−1 groups for non-network objectives: one entry per block). */
  readonly layer: number;
  /** Names of the parameter blocks in the group, e.g. `layers[1].weight`, `layers[1].bias`. */
  readonly blocks: readonly string[];
  /** Parameters in the group. */
  readonly size: number;
  /** λmax of the diagonal block. */
  readonly lambdaMax: number;
  /** Lanczos error bound on `lambdaMax`. */
  readonly errorBound: number;
  /** 2/λmax: the plain-GD step this block alone would tolerate (Infinity when λmax ≤ 0). */
  readonly stableLr: number;
  readonly products: number;
  readonly stop: StopReason;
}

/** Options of {@link layerSharpness}. */
export interface LayerSharpnessOptions extends IterationControl {
  rows?: Rows;
  kind?: CurvatureKind;
  /** Lanczos tolerance (default 1e-8) and step cap per layer (default 200). */
  tol?: number;
  maxIterations?: number;
}

function groups(blocks: readonly ParamBlock[]): ParamBlock[][] {
  const out: ParamBlock[][] = [];
  const byLayer = new Map<number, ParamBlock[]>();
  for (const b of blocks) {
    if (b.layer < 0) {
      out.push([b]);
      continue;
    }
    let g = byLayer.get(b.layer);
    if (g === undefined) {
      g = [];
      byLayer.set(b.layer, g);
      out.push(g);
    }
    g.push(b);
  }
  return out;
}

/**
 * λmax of every layer's diagonal block of the Hessian (or Gauss-Newton matrix), by top-1 Lanczos
 * on the block operator (Golub & Van Loan 4th ed., §10.1).
 *
 * @param rng - seeded generator; each layer forks `layer-<index>`.
 */
export function layerSharpness(objective: Objective, w: Float64Array, rng: Rng, options: LayerSharpnessOptions = {}): LayerSharpness[] {
  const p = objective.parameterCount;
  const kind = options.kind ?? 'hessian';
  const full = new Float64Array(p);
  const out = new Float64Array(p);
  const result: LayerSharpness[] = [];
  const gs = groups(objective.blocks);
  for (let gi = 0; gi < gs.length; gi++) {
    if (stopRequested(options)) break;
    const g = gs[gi];
    const size = g.reduce((s, b) => s + b.size, 0);
    const op = (v: Float64Array, o: Float64Array): void => {
      full.fill(0);
      let k = 0;
      for (const b of g) for (let i = 0; i < b.size; i++) full[b.offset + i] = v[k++];
      if (kind === 'hessian') objective.hvp(w, full, out, options.rows);
      else objective.gnvp(w, full, out, options.rows);
      k = 0;
      for (const b of g) for (let i = 0; i < b.size; i++) o[k++] = out[b.offset + i];
    };
    const label = g[0].layer >= 0 ? `layer-${g[0].layer}` : `block-${g[0].name}`;
    const l = lanczosExtremes(op, size, rng.fork(label), { k: 1, tol: options.tol ?? 1e-8, maxIterations: options.maxIterations ?? 200, shouldStop: options.shouldStop });
    const top = l.largest[0];
    result.push({
      layer: g[0].layer,
      blocks: g.map((b) => b.name),
      size,
      lambdaMax: top.value,
      errorBound: top.errorBound,
      stableLr: top.value > 0 ? 2 / top.value : Infinity,
      products: l.products,
      stop: l.stop,
    });
    if (reportProgress(options, { phase: 'layers', done: gi + 1, total: gs.length, products: result.reduce((s, r) => s + r.products, 0), detail: label })) break;
  }
  return result;
}
