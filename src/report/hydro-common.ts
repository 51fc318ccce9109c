/** Pieces the `ponds` and `runoff` reports share: clean values, cell references, the depression record's common part, the report head. */
import type { Grid } from '../surface/grid.js';
import type { CellAreas } from '../hydro/areas.js';
import type { Hierarchy } from '../hydro/hierarchy.js';
import type { Connectivity } from '../surface/complex.js';
import { surfaceInfo, SILL_VERSION, type SurfaceInfo, type EulerInfo } from './common.js';
import { formatNumber, Rows } from '../io/stream.js';
import { outletNeighbour } from '../hydro/spill-paths.js';

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
    const x = roundToDigits(v, p);
    if (Math.fround(x) === v) return x;
  }
  return v;
}

const POW10 = Array.from({ length: 23 }, (_, k) => 10 ** k);

/**
 * Number(v.toPrecision(p)) for a float32 value v, without the string: when v · 10^k (k = p − 1 −
 * the decimal exponent of v, 0 ≤ k ≤ 12) is exact in a double — a float32 has 24 significant bits
 * and 10^k = 2^k · 5^k adds at most 28 — rounding it half up (as toPrecision does) and dividing by
 * 10^k (a correctly rounded division of two exact integers) gives the same double as parsing the
 * decimal. Other cases go through toPrecision.
 */
function roundToDigits(v: number, p: number): number {
  const a = v < 0 ? -v : v;
  if (a === 0) return v;
  let e = Math.floor(Math.log10(a));
  if (e < -22 || e > 22) return Number(v.toPrecision(p));
  if (POW10[Math.abs(e)] > a && e >= 0) e--;
  else if (e < 0 && 1 / POW10[-e] > a) e--;
  if (e + 1 <= 22 && e + 1 >= 0 && POW10[e + 1] <= a) e++;
  const k = p - 1 - e;
  if (k < 0 || k > 12) return Number(v.toPrecision(p));
  const m = Math.floor(a * POW10[k] + 0.5);
  const x = m / POW10[k];
  return v < 0 ? -x : x;
}

/** a − b of two clean decimals, rounded to the decimals they are written with (0.03, not 0.0300140380859375). */
export function cleanDifference(a: number, b: number): number {
  const da = decimalsOf(a), db = decimalsOf(b);
  if (da < 0 || db < 0) return a - b;
  return toFixedNumber(a - b, Math.max(da, db));
}

/** The fractional digits of String(x), or −1 when it is written with an exponent. */
function decimalsOf(x: number): number {
  const a = x < 0 ? -x : x;
  if (a >= 1e-6 && a < 1e15) {
    // the first k at which x is the double nearest to a decimal with k fractional digits is the
    // length of its shortest round-trip text's fraction (a shorter decimal would be that text)
    if (Math.floor(a) === a) return 0;
    for (let k = 1; k <= 12; k++) {
      const m = Math.round(a * POW10[k]);
      if (m < 9007199254740992 && m / POW10[k] === a) return k;
    }
  }
  const s = String(x);
  if (/e/i.test(s)) return -1;
  const k = s.indexOf('.');
  return k < 0 ? 0 : s.length - k - 1;
}

/**
 * Number(x.toFixed(d)) without the string where the rounding is unambiguous: x · 10^d below 10^9
 * (its rounding error far below 10^−6) and within 10^−6 of an integer, as a difference of two
 * d-decimal values is; otherwise toFixed.
 */
function toFixedNumber(x: number, d: number): number {
  if (x === 0) return 0; // toFixed writes −0 as "0"
  const a = x < 0 ? -x : x;
  if (d <= 22 && a < 1e15) {
    const y = a * POW10[d], m = Math.round(y);
    if (y < 1e9 && Math.abs(y - m) < 1e-6) { const r = m / POW10[d]; return x < 0 ? -r : r; }
  }
  return Number(x.toFixed(d));
}

export function cellRef(g: Grid, i: number): CellRef {
  const row = Math.floor(i / g.width), col = i - row * g.width;
  return { col, row, x: g.x(col, row), y: g.y(col, row) };
}

/**
 * The depressions of a `ponds` or `runoff` result as columns beside the hierarchy's: the values
 * as the reports write them (cleaned on float32 grids) and the cell beyond each pass. Indexed by
 * id (entry 0 unused). Records are views made from these on demand (`depressionCore`), and the
 * writers read them directly.
 */
export interface DepressionColumns {
  count: number;
  /** The hierarchy's volume column (not a copy). */
  volume: Float64Array;
  pitValue: Float64Array;
  spillValue: Float64Array;
  maxDepth: Float64Array;
  /** The cell the overflow runs into (col, row; off the grid for an outlet beyond the edge), and whether it is an outlet. */
  toCol: Int32Array;
  toRow: Int32Array;
  toOutside: Uint8Array;
}

/**
 * The columns of `res`'s depressions (one pass over the hierarchy, no object per depression).
 * `outlet(id)`: the outlet beyond depression id's pass when it spills to the outside, for a grid
 * whose cells are not in `res.grid.values` (a mosaic analysed tile by tile); default: looked up there.
 */
export function depressionColumns(res: HydroResultCore, outlet?: (id: number) => [number, number] | null): DepressionColumns {
  const g = res.grid, H = res.hierarchy, W = g.width;
  const f32 = g.values instanceof Float32Array;
  const R = H.count + 1;
  const pitValue = new Float64Array(R), spillValue = new Float64Array(R), maxDepth = new Float64Array(R);
  const toCol = new Int32Array(R), toRow = new Int32Array(R), toOutside = new Uint8Array(R);
  for (let id = 1; id < R; id++) {
    const pv = cleanValue(H.pitValue[id], f32), sv = cleanValue(H.spillValue[id], f32);
    pitValue[id] = pv;
    spillValue[id] = sv;
    maxDepth[id] = f32 ? cleanDifference(sv, pv) : H.maxDepth[id];
    const to = H.pourTo[id];
    if (to >= 0) {
      const r = Math.floor(to / W);
      toCol[id] = to - r * W; toRow[id] = r;
      continue;
    }
    // the nearest outlet of the pass cell's ring (off the grid, or nodata that drains)
    const o = outlet ? outlet(id) : outletNeighbour(g, res.options.connectivity, res.options.nodataOutlet, H.spillCell[id]);
    if (o === null) {
      const pass = H.spillCell[id], row = Math.floor(pass / W);
      throw new Error(`internal: pass cell (${pass - row * W}, ${row}) spills to the outside but touches no outlet`);
    }
    toCol[id] = o[0]; toRow[id] = o[1]; toOutside[id] = 1;
  }
  return { count: H.count, volume: H.volume, pitValue, spillValue, maxDepth, toCol, toRow, toOutside };
}

/** The common part of depression `id`'s record (values cleaned on float32 grids), from the columns. */
export function depressionCore(res: HydroResultCore, cols: DepressionColumns, id: number): DepressionCore {
  const g = res.grid, H = res.hierarchy;
  const kids = Array.from(H.children.subarray(H.childStart[id], H.childStart[id + 1]));
  const tc = cols.toCol[id], tr = cols.toRow[id];
  return {
    id,
    parent: H.parent[id] === 0 ? null : H.parent[id],
    children: kids,
    level: H.level[id],
    kind: kids.length === 0 ? 'leaf' : 'merged',
    pitValue: cols.pitValue[id],
    pit: cellRef(g, H.pit[id]),
    spillValue: cols.spillValue[id],
    pour: { ...cellRef(g, H.spillCell[id]), to: { col: tc, row: tr, x: g.x(tc, tr), y: g.y(tc, tr), outside: cols.toOutside[id] === 1 } },
    into: H.into[id] === 0 ? 'outside' : H.into[id],
    cells: H.wetCells[id],
    area: H.area[id],
    volume: H.volume[id],
    maxDepth: cols.maxDepth[id],
  };
}

/** Depression `id`'s children ids joined by `sep` (no array made). */
export function childrenText(H: Hierarchy, id: number, sep: string): string {
  const a = H.childStart[id], b = H.childStart[id + 1];
  let s = '';
  for (let q = a; q < b; q++) s += q === a ? '' + H.children[q] : sep + H.children[q];
  return s;
}

/** A cell's `{"col":…,"row":…,"x":…,"y":…` (no closing brace). */
function cellJson(g: Grid, col: number, row: number): string {
  return `{"col":${col},"row":${row},"x":${formatNumber(g.x(col, row))},"y":${formatNumber(g.y(col, row))}`;
}

/**
 * The JSON text of the common part of depression `id`'s record, without its closing brace: the
 * same text as JSON.stringify(depressionCore(res, cols, id)) up to its last member (−0 aside).
 */
export function depressionCoreJson(res: HydroResultCore, cols: DepressionColumns, id: number): string {
  const g = res.grid, H = res.hierarchy, W = g.width;
  const p = H.parent[id], into = H.into[id];
  const pit = H.pit[id], pr = Math.floor(pit / W);
  const pass = H.spillCell[id], sr = Math.floor(pass / W);
  const kids = H.childStart[id + 1] - H.childStart[id];
  return `{"id":${id},"parent":${p === 0 ? 'null' : p},"children":[${childrenText(H, id, ',')}],"level":${H.level[id]},"kind":${kids === 0 ? '"leaf"' : '"merged"'}` +
    `,"pitValue":${formatNumber(cols.pitValue[id])},"pit":${cellJson(g, pit - pr * W, pr)}}` +
    `,"spillValue":${formatNumber(cols.spillValue[id])},"pour":${cellJson(g, pass - sr * W, sr)}` +
    `,"to":${cellJson(g, cols.toCol[id], cols.toRow[id])},"outside":${cols.toOutside[id] === 1 ? 'true' : 'false'}}}` +
    `,"into":${into === 0 ? '"outside"' : into},"cells":${formatNumber(H.wetCells[id])},"area":${formatNumber(H.area[id])}` +
    `,"volume":${formatNumber(H.volume[id])},"maxDepth":${formatNumber(cols.maxDepth[id])}`;
}

/**
 * The k largest of `values[lo..hi)` (ties: the smaller index first; NaN never), largest first, by
 * a bounded heap: O(n log k) time, O(k) memory, no copy of the column.
 */
export function topK(values: ArrayLike<number>, lo: number, hi: number, k: number): number[] {
  return topKBy(lo, hi, k, (a, b) => values[a] < values[b] || (values[a] === values[b] && a > b), (i) => values[i] === values[i]);
}

/**
 * The k best indices of lo..hi−1 under a strict order (`weaker(a, b)`: a ranks below b), best
 * first, by a bounded heap (a partial selection: O(n log k), O(k) memory); `keep(i)` filters.
 */
export function topKBy(lo: number, hi: number, k: number, weaker: (a: number, b: number) => boolean, keep: (i: number) => boolean = () => true): number[] {
  const heap: number[] = []; // a min-heap under `weaker`: the root is the weakest kept
  if (k <= 0) return heap;
  for (let i = lo; i < hi; i++) {
    if (!keep(i)) continue;
    if (heap.length < k) {
      heap.push(i);
      for (let c = heap.length - 1; c > 0;) {
        const pa = (c - 1) >> 1;
        if (!weaker(heap[c], heap[pa])) break;
        const t = heap[c]; heap[c] = heap[pa]; heap[pa] = t;
        c = pa;
      }
    } else if (weaker(heap[0], i)) {
      heap[0] = i;
      for (let c = 0; ;) {
        const l = 2 * c + 1, r = l + 1;
        let m = c;
        if (l < heap.length && weaker(heap[l], heap[m])) m = l;
        if (r < heap.length && weaker(heap[r], heap[m])) m = r;
        if (m === c) break;
        const t = heap[c]; heap[c] = heap[m]; heap[m] = t;
        c = m;
      }
    }
  }
  return heap.sort((a, b) => (weaker(a, b) ? 1 : weaker(b, a) ? -1 : 0));
}

/**
 * The depressions of a report: a lazy list of records (record i is depression id i + 1) over the
 * hierarchy's and the report's columns, which writers read directly.
 */
export class DepressionRows<T> extends Rows<T> {
  constructor(length: number, at: (i: number) => T, json: (i: number) => string, readonly columns: DepressionColumns) {
    super(length, at, { compact: true, json });
  }

  /**
   * The records of the `k` largest depressions by `by` (default volume), largest first (ties: the
   * smaller id): a bounded selection over the column, no record made for the others.
   */
  largest(k: number, by: 'volume' | 'maxDepth' | 'spillValue' | 'pitValue' = 'volume'): T[] {
    return topK(this.columns[by], 1, this.length + 1, k).map((id) => this.at(id - 1));
  }
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
