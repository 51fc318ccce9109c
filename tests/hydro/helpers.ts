/** Shared helpers for the ponding tests: fixtures, small grids, and an independent brute-force fill. */
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { Grid, type GeoTransform, type Crs } from '../../src/surface/grid.js';

export const HYDRO_FIXTURES = fileURLToPath(new URL('../../fixtures/hydro/', import.meta.url));

export interface FillCase {
  name: string;
  width: number;
  height: number;
  dtype: 'float32' | 'float64';
  connectivity: 4 | 6 | 8;
  nodataAs: 'outlet' | 'wall';
  values: (number | null)[];
  filled: (number | null)[];
  sumDepth: number;
  raisedCells: number;
}

export interface FillReference {
  skimage_version: string;
  numpy_version: string;
  cases: FillCase[];
}

export function fillReference(): FillReference {
  return JSON.parse(readFileSync(HYDRO_FIXTURES + 'fill-reference.json', 'utf8'));
}

export function gridOf(width: number, height: number, values: ArrayLike<number | null>, opts: { f32?: boolean; transform?: GeoTransform; crs?: Crs | null } = {}): Grid {
  const arr = opts.f32 ? new Float32Array(width * height) : new Float64Array(width * height);
  for (let i = 0; i < width * height; i++) { const v = values[i]; arr[i] = v === null ? NaN : v; }
  return new Grid({ width, height, values: arr, transform: opts.transform, crs: opts.crs ?? null });
}

/** Ring offsets (dcol, drow) of the sublevel graph of each connectivity (DESIGN.md §3). */
export const NEIGHBOURS: Record<4 | 6 | 8, [number, number][]> = {
  8: [[1, 0], [1, 1], [0, 1], [-1, 1], [-1, 0], [-1, -1], [0, -1], [1, -1]],
  6: [[1, 0], [1, 1], [0, 1], [-1, 0], [-1, -1], [0, -1]],
  4: [[1, 0], [0, 1], [-1, 0], [0, -1]],
};

/**
 * The fully filled DEM straight from its definition, by relaxation: the level of a cell is the
 * lowest, over all paths from it to an outlet, of the highest value on the path. Outlets: off the
 * grid, and nodata cells when `nodataOutlet`. Cells that cannot reach an outlet stay +∞.
 * O(n²) at worst, for small grids only.
 */
export function bruteFill(g: Grid, conn: 4 | 6 | 8, nodataOutlet = true): Float64Array {
  const { width: W, height: H, values: z } = g;
  const F = new Float64Array(W * H).fill(Infinity);
  const nb = NEIGHBOURS[conn];
  for (let changed = true; changed;) {
    changed = false;
    for (let r = 0; r < H; r++) for (let c = 0; c < W; c++) {
      const i = r * W + c;
      if (Number.isNaN(z[i])) { F[i] = NaN; continue; }
      let best = F[i];
      for (const [dc, dr] of nb) {
        const cc = c + dc, rr = r + dr;
        let level: number;
        if (cc < 0 || rr < 0 || cc >= W || rr >= H) level = -Infinity;
        else if (Number.isNaN(z[rr * W + cc])) { if (!nodataOutlet) continue; level = -Infinity; }
        else level = F[rr * W + cc];
        const through = Math.max(z[i], level);
        if (through < best) best = through;
      }
      if (best < F[i]) { F[i] = best; changed = true; }
    }
  }
  return F;
}

/** Deterministic small random grids with ties, plateaus and optional nodata. */
export function randomGrid(seed: number, w: number, h: number, levels: number, holeRate: number, f32 = false): Grid {
  let s = seed >>> 0 || 1;
  const rnd = () => ((s = (Math.imul(s, 1664525) + 1013904223) >>> 0) / 2 ** 32);
  const vals: (number | null)[] = [];
  for (let i = 0; i < w * h; i++) vals.push(rnd() < holeRate ? null : levels > 0 ? Math.floor(rnd() * levels) : rnd() * 10);
  if (!vals.some((v) => v !== null)) vals[0] = 0;
  return gridOf(w, h, vals, { f32 });
}
