/** Pieces the `ponds` and `runoff` reports share: clean values, cell references, the depression record's common part, the report head. */
import type { Grid } from '../surface/grid.js';
import type { CellAreas } from '../hydro/areas.js';
import type { Hierarchy } from '../hydro/hierarchy.js';
import type { Connectivity } from '../surface/complex.js';
import { surfaceInfo, SILL_VERSION, type SurfaceInfo, type EulerInfo } from './common.js';

export interface CellRef {
  col: number;
  row: number;
  x: number;
  y: number;
}

export interface PourRecord extends CellRef {
  /** The cell beyond the pass that the water overflows into; `outside` when it leaves the map (off the grid or a nodata outlet). */
  to: CellRef & { outside: boolean };
}

/** What a depression record of `ponds` and of `runoff` holds alike (their reports add to it). */
export interface DepressionCore {
  id: number;
  parent: number | null;
  children: number[];
  /** 0 for a top-level depression, 1 for one nested in it, … */
  level: number;
  kind: 'leaf' | 'merged';
  pitValue: number;
  pit: CellRef;
  spillValue: number;
  /** The pass cell, and the cell beyond it the overflow runs into. */
  pour: PourRecord;
  /** The depression the overflow runs into, or 'outside'. */
  into: number | 'outside';
  /** Cells under water at the spill level (depth > 0), their area and the volume: the capacity. */
  cells: number;
  area: number;
  volume: number;
  maxDepth: number;
}

/** What the report helpers read of a `ponds` or `runoff` result. */
export interface HydroResultCore {
  grid: Grid;
  areas: CellAreas;
  hierarchy: Hierarchy;
  euler: EulerInfo | null;
  options: { connectivity: Connectivity; nodataOutlet: boolean };
}

/**
 * A float32 grid value as the shortest decimal that reads back as the same float32
 * (239.46 rather than 239.4600067138672); float64 values are returned as they are.
 */
export function cleanValue(v: number, float32: boolean): number {
  if (!float32 || !Number.isFinite(v)) return v;
  for (let p = 6; p <= 9; p++) {
    const x = Number(v.toPrecision(p));
    if (Math.fround(x) === v) return x;
  }
  return v;
}

/** a − b of two clean decimals, rounded to the decimals they are written with (0.03, not 0.0300140380859375). */
export function cleanDifference(a: number, b: number): number {
  const dec = (x: number) => {
    const s = String(x);
    if (/e/i.test(s)) return -1;
    const k = s.indexOf('.');
    return k < 0 ? 0 : s.length - k - 1;
  };
  const da = dec(a), db = dec(b);
  if (da < 0 || db < 0) return a - b;
  return Number((a - b).toFixed(Math.max(da, db)));
}

export function cellRef(g: Grid, i: number): CellRef {
  const row = Math.floor(i / g.width), col = i - row * g.width;
  return { col, row, x: g.x(col, row), y: g.y(col, row) };
}

/** Where the water goes beyond the pass: a cell, or the nearest outlet of the ring (off the grid or nodata). */
function pourTarget(res: HydroResultCore, pass: number, to: number): PourRecord['to'] {
  const g = res.grid;
  if (to >= 0) return { ...cellRef(g, to), outside: false };
  const row = Math.floor(pass / g.width), col = pass - row * g.width;
  const ring = res.options.connectivity === 4 ? [[1, 0], [0, 1], [-1, 0], [0, -1]]
    : res.options.connectivity === 6 ? [[1, 0], [1, 1], [0, 1], [-1, 0], [-1, -1], [0, -1]]
      : [[1, 0], [0, 1], [-1, 0], [0, -1], [1, 1], [-1, 1], [-1, -1], [1, -1]];
  for (const [dc, dr] of ring) {
    const c = col + dc, r = row + dr;
    const off = c < 0 || r < 0 || c >= g.width || r >= g.height;
    if (off || (res.options.nodataOutlet && Number.isNaN(g.values[r * g.width + c]))) {
      return { col: c, row: r, x: g.x(c, r), y: g.y(c, r), outside: true };
    }
  }
  throw new Error(`internal: pass cell (${col}, ${row}) spills to the outside but touches no outlet`);
}

/** The common part of depression `id`'s record (values cleaned on float32 grids). */
export function depressionCore(res: HydroResultCore, id: number): DepressionCore {
  const g = res.grid, H = res.hierarchy;
  const f32 = g.values instanceof Float32Array;
  const pitValue = cleanValue(H.pitValue[id], f32), spillValue = cleanValue(H.spillValue[id], f32);
  const kids = Array.from(H.children.subarray(H.childStart[id], H.childStart[id + 1]));
  return {
    id,
    parent: H.parent[id] === 0 ? null : H.parent[id],
    children: kids,
    level: H.level[id],
    kind: kids.length === 0 ? 'leaf' : 'merged',
    pitValue,
    pit: cellRef(g, H.pit[id]),
    spillValue,
    pour: { ...cellRef(g, H.spillCell[id]), to: pourTarget(res, H.spillCell[id], H.pourTo[id]) },
    into: H.into[id] === 0 ? 'outside' : H.into[id],
    cells: H.wetCells[id],
    area: H.area[id],
    volume: H.volume[id],
    maxDepth: f32 ? cleanDifference(spillValue, pitValue) : H.maxDepth[id],
  };
}

/** The keys every hydrology report starts with, after its schema. */
export function reportHead(res: HydroResultCore, input: string | null, caution: string): {
  sill: string; input: string | null; caution: string; surface: SurfaceInfo; connectivity: number;
  boundary: 'open'; nodataAs: 'outlet' | 'wall'; euler: EulerInfo | null;
} {
  const e = res.euler;
  return {
    sill: SILL_VERSION,
    input,
    caution,
    surface: surfaceInfo(res.grid),
    connectivity: res.options.connectivity,
    boundary: 'open',
    nodataAs: res.options.nodataOutlet ? 'outlet' : 'wall',
    euler: e ? { ...e } : null,
  };
}

/** The units block (`extra` goes before the notes), with a note when the CRS has no EPSG code. */
export function reportUnits<X extends object>(res: HydroResultCore, extra: X): {
  horizontal: string; elevation: string; depth: string; area: string; volume: string; notes: string[];
} & X {
  const g = res.grid, u = res.areas.units;
  return {
    horizontal: u.horizontal, elevation: u.elevation, depth: u.elevation, area: u.area, volume: u.volume,
    ...extra,
    notes: g.crs && g.crs.epsg === undefined
      ? [...u.notes, 'the CRS has no EPSG code, so the GeoTIFFs and the GeoJSON are written without one: assign the DEM\'s CRS to them in your GIS']
      : u.notes,
  };
}

/** Area of one cell: a single value, or the range over rows on a geographic grid. */
export function cellAreaRange(areas: CellAreas): { uniform: boolean; min: number; max: number } {
  const rowArea = areas.rowArea;
  let amin = Infinity, amax = -Infinity;
  for (let r = 0; r < rowArea.length; r++) { amin = Math.min(amin, rowArea[r]); amax = Math.max(amax, rowArea[r]); }
  return { uniform: areas.uniform, min: amin, max: amax };
}
