/**
 * Level lines of a function sampled on a rectangular grid, by marching squares: each grid cell's
 * corners above or below the level pick which of its edges the line crosses, the crossing is placed
 * by linear interpolation along the edge, and a saddle cell (opposite corners on the same side) is
 * resolved by the mean of its corners (common practice; the algorithm is the 2-D case of marching
 * cubes, Lorensen & Cline, SIGGRAPH 1987). The basic plotly bundle the cell uses has no contour
 * trace, so the plane readout draws these segments as line series.
 */

/** Segments of one level line: x and y with `null` in y between segments (plotly's line gaps). */
export interface LevelLine {
  level: number;
  x: number[];
  y: (number | null)[];
  /** Segments found. */
  segments: number;
}

/**
 * Level lines of z (z[j][i] at (xs[i], ys[j])) at each of `levels`. Non-finite samples are treated
 * as above every level (a diverged corner), so lines close around them.
 */
export function levelLines(xs: readonly number[], ys: readonly number[], z: readonly (readonly number[])[], levels: readonly number[]): LevelLine[] {
  if (z.length !== ys.length || z.some((row) => row.length !== xs.length)) throw new RangeError(`the grid must be ${ys.length} rows of ${xs.length} values`);
  return levels.map((level) => {
    const x: number[] = [];
    const y: (number | null)[] = [];
    let segments = 0;
    const v = (i: number, j: number): number => (Number.isFinite(z[j][i]) ? z[j][i] : Infinity);
    // Crossing point on the edge between grid points a and b (same row or same column).
    const cross = (ia: number, ja: number, ib: number, jb: number): [number, number] => {
      const va = v(ia, ja);
      const vb = v(ib, jb);
      const s = va === vb ? 0.5 : !Number.isFinite(vb) ? 0 : !Number.isFinite(va) ? 1 : (level - va) / (vb - va);
      return [xs[ia] + s * (xs[ib] - xs[ia]), ys[ja] + s * (ys[jb] - ys[ja])];
    };
    const segment = (p: [number, number], q: [number, number]): void => {
      x.push(p[0], q[0], q[0]);
      y.push(p[1], q[1], null);
      segments++;
    };
    for (let j = 0; j + 1 < ys.length; j++) {
      for (let i = 0; i + 1 < xs.length; i++) {
        const a = v(i, j) >= level ? 1 : 0; // bottom left
        const b = v(i + 1, j) >= level ? 1 : 0; // bottom right
        const c = v(i + 1, j + 1) >= level ? 1 : 0; // top right
        const d = v(i, j + 1) >= level ? 1 : 0; // top left
        const index = a | (b << 1) | (c << 2) | (d << 3);
        if (index === 0 || index === 15) continue;
        const bottom = (): [number, number] => cross(i, j, i + 1, j);
        const right = (): [number, number] => cross(i + 1, j, i + 1, j + 1);
        const top = (): [number, number] => cross(i, j + 1, i + 1, j + 1);
        const left = (): [number, number] => cross(i, j, i, j + 1);
        switch (index) {
          case 1: case 14: segment(left(), bottom()); break;
          case 2: case 13: segment(bottom(), right()); break;
          case 3: case 12: segment(left(), right()); break;
          case 4: case 11: segment(right(), top()); break;
          case 6: case 9: segment(bottom(), top()); break;
          case 7: case 8: segment(left(), top()); break;
          case 5: case 10: {
            const centre = (v(i, j) + v(i + 1, j) + v(i + 1, j + 1) + v(i, j + 1)) / 4 >= level ? 1 : 0;
            // 5: bottom-left and top-right above; 10: the other two. The centre decides which pairs join.
            if ((index === 5) === (centre === 1)) { segment(left(), top()); segment(bottom(), right()); } else { segment(left(), bottom()); segment(right(), top()); }
            break;
          }
          default: break;
        }
      }
    }
    return { level, x, y, segments };
  });
}

/**
 * `count` levels spanning the finite values of z: spaced geometrically when every value is positive
 * and they span more than a decade (a loss surface), evenly otherwise; the extremes themselves
 * are left out (a level at the minimum draws a point).
 */
export function contourLevels(z: readonly (readonly number[])[], count: number): number[] {
  const values = z.flat().filter((x) => Number.isFinite(x));
  if (values.length === 0 || count < 1) return [];
  const lo = Math.min(...values);
  const hi = Math.max(...values);
  if (!(hi > lo)) return [];
  const geometric = lo > 0 && hi / lo > 10;
  return Array.from({ length: count }, (_, k) => {
    const f = (k + 1) / (count + 1);
    return geometric ? lo * Math.pow(hi / lo, f) : lo + f * (hi - lo);
  });
}
