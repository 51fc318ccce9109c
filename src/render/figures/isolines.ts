/**
 * Marching squares on a raster, on typed arrays: the isolines of one level as polylines (open where
 * they reach the raster edge or nodata, closed otherwise). Value k of row r sits at (k + ½, r + ½),
 * as in d3-contour, and a crossing is placed by linear interpolation between the two values of its
 * edge. A marching cell is the square between four values; cells with a missing (NaN) corner are
 * skipped, so no line runs along the raster edge or around nodata. The case table, saddles
 * included, is d3-contour's, so the segments are the same (tests/render/isolines.test.ts checks
 * this against d3-contour). Unlike d3-contour nothing here sorts rings into polygons and holes:
 * that step costs holes × polygons and dominates on rough surfaces; stroked lines never need it.
 *
 * Crossing points are numbered by the raster edge they lie on: horizontal edges (between (c, r)
 * and (c+1, r)) first, then vertical ones. Every edge lies in at most two marching cells, so each
 * point has at most two neighbours: two Int32 per edge hold the whole adjacency.
 */

/** Segments of each marching case as pairs of cell sides (0 top, 1 right, 2 bottom, 3 left); −1 = none. Index: BL | BR << 1 | TR << 2 | TL << 3 (corners ≥ level). */
const SEGMENTS = Int8Array.from([
  -1, -1, -1, -1, 2, 3, -1, -1, 1, 2, -1, -1, 1, 3, -1, -1,
  0, 1, -1, -1, 2, 3, 0, 1, 0, 2, -1, -1, 0, 3, -1, -1,
  3, 0, -1, -1, 2, 0, -1, -1, 3, 0, 1, 2, 1, 0, -1, -1,
  3, 1, -1, -1, 2, 1, -1, -1, 3, 2, -1, -1, -1, -1, -1, -1,
]);

/** The polylines of one level: points in `xy` (x, y pairs), line k from point start[k] to start[k + 1]. */
export interface Isolines {
  xy: Float64Array;
  start: Int32Array;
  /** 1 where line k is a closed loop (its last point joins its first). */
  closed: Uint8Array;
  lines: number;
  points: number;
}

/** A reusable tracer for w × h rasters: the scratch arrays are allocated once (four Int32 per raster edge). */
export class IsolineTracer {
  readonly w: number;
  readonly h: number;
  private readonly nH: number;
  private readonly nb0: Int32Array;
  private readonly nb1: Int32Array;
  private readonly seen: Int32Array;
  private readonly done: Int32Array;
  private touched: Int32Array;
  private pass = 0;

  constructor(w: number, h: number) {
    this.w = w; this.h = h;
    this.nH = Math.max(0, w - 1) * h;
    const nE = this.nH + w * Math.max(0, h - 1);
    this.nb0 = new Int32Array(nE);
    this.nb1 = new Int32Array(nE);
    this.seen = new Int32Array(nE);
    this.done = new Int32Array(nE);
    this.touched = new Int32Array(Math.min(nE, 1024));
  }

  /** Number of raster edges whose two values (both present) lie on either side of some level in `levels` (sorted ascending): the most points the lines of those levels can have. */
  static crossings(values: ArrayLike<number>, w: number, h: number, levels: ArrayLike<number>): number {
    const m = levels.length;
    // #levels ≤ v by binary search: consistent with the crossing test v ≥ level
    const le = (v: number): number => {
      let lo = 0, hi = m;
      while (lo < hi) { const mid = (lo + hi) >> 1; if (levels[mid] <= v) lo = mid + 1; else hi = mid; }
      return lo;
    };
    let total = 0;
    for (let r = 0; r < h; r++) {
      const row = r * w;
      for (let c = 0; c < w; c++) {
        const v = values[row + c];
        if (v !== v) continue;
        const lv = le(v);
        if (c + 1 < w) { const u = values[row + c + 1]; if (u === u) { const lu = le(u); total += lu > lv ? lu - lv : lv - lu; } }
        if (r + 1 < h) { const u = values[row + w + c]; if (u === u) { const lu = le(u); total += lu > lv ? lu - lv : lv - lu; } }
      }
    }
    return total;
  }

  /** The isolines of `values` (row-major, w × h, NaN = missing) at `level`; `box` [c0, r0, c1, r1] (inclusive value indices) limits the cells visited. */
  trace(values: ArrayLike<number>, level: number, box?: [number, number, number, number]): Isolines {
    const { w, h, nH, nb0, nb1, seen, done } = this;
    const c0 = box ? Math.max(0, box[0]) : 0, r0 = box ? Math.max(0, box[1]) : 0;
    const c1 = box ? Math.min(w - 1, box[2]) : w - 1, r1 = box ? Math.min(h - 1, box[3]) : h - 1;
    const pass = ++this.pass;
    let nt = 0;
    const link = (a: number, b: number) => {
      if (seen[a] !== pass) {
        seen[a] = pass; nb0[a] = b; nb1[a] = -1;
        if (nt === this.touched.length) { const t = new Int32Array(Math.min(2 * nt, nb0.length)); t.set(this.touched); this.touched = t; }
        this.touched[nt++] = a;
      } else nb1[a] = b;
    };
    const side = new Int32Array(4);
    for (let r = r0; r < r1; r++) {
      const top = r * w, bot = top + w;
      for (let c = c0; c < c1; c++) {
        const tl = values[top + c], tr = values[top + c + 1], br = values[bot + c + 1], bl = values[bot + c];
        if (tl !== tl || tr !== tr || br !== br || bl !== bl) continue;
        const k = (bl >= level ? 1 : 0) | (br >= level ? 2 : 0) | (tr >= level ? 4 : 0) | (tl >= level ? 8 : 0);
        if (k === 0 || k === 15) continue;
        side[0] = r * (w - 1) + c; side[1] = nH + r * w + c + 1; side[2] = (r + 1) * (w - 1) + c; side[3] = nH + r * w + c;
        const q = 4 * k;
        const a = side[SEGMENTS[q]], b = side[SEGMENTS[q + 1]];
        link(a, b); link(b, a);
        if (SEGMENTS[q + 2] >= 0) { const e = side[SEGMENTS[q + 2]], f = side[SEGMENTS[q + 3]]; link(e, f); link(f, e); }
      }
    }
    const xy = new Float64Array(2 * nt);
    const starts: number[] = [];
    const closed: number[] = [];
    let np = 0;
    const put = (e: number) => {
      let x: number, y: number, v0: number, v1: number;
      // a value of −∞ (the margin of paddedRaster) puts the crossing halfway: on the raster's edge
      if (e < nH) {
        const r = Math.floor(e / (w - 1)), c = e - r * (w - 1);
        v0 = values[r * w + c]; v1 = values[r * w + c + 1];
        x = c + 0.5 + (v0 === -Infinity || v1 === -Infinity ? 0.5 : (level - v0) / (v1 - v0)); y = r + 0.5;
      } else {
        const i = e - nH, r = Math.floor(i / w), c = i - r * w;
        v0 = values[r * w + c]; v1 = values[(r + 1) * w + c];
        x = c + 0.5; y = r + 0.5 + (v0 === -Infinity || v1 === -Infinity ? 0.5 : (level - v0) / (v1 - v0));
      }
      xy[2 * np] = x; xy[2 * np + 1] = y; np++;
      done[e] = pass;
    };
    const walk = (e: number) => {
      let prev = -1, cur = e;
      for (;;) {
        put(cur);
        const next = nb0[cur] === prev ? nb1[cur] : nb0[cur];
        if (next < 0 || done[next] === pass) return;
        prev = cur; cur = next;
      }
    };
    // open lines first, from one of their two ends; what is left are loops
    for (let t = 0; t < nt; t++) {
      const e = this.touched[t];
      if (nb1[e] >= 0 || done[e] === pass) continue;
      starts.push(np); closed.push(0); walk(e);
    }
    for (let t = 0; t < nt; t++) {
      const e = this.touched[t];
      if (done[e] === pass) continue;
      starts.push(np); closed.push(1); walk(e);
    }
    starts.push(np);
    return { xy, start: Int32Array.from(starts), closed: Uint8Array.from(closed), lines: closed.length, points: np };
  }
}

/**
 * Closed rings around the region {value ≥ level} of a w × h raster, for an even-odd fill, drawn as
 * d3-contour draws them: the raster is framed by a margin below every level, so every ring closes,
 * running along the raster's edge (x = 0 or w, y = 0 or h) where the region reaches it; nodata
 * counts as below every level, a ring passing it runs through the centres of the values beside it.
 * Coordinates as in `trace` (value k at k + ½). One `padded` raster (paddedRaster) serves all levels.
 */
export function fillRings(padded: { values: Float64Array; tracer: IsolineTracer }, level: number): Isolines {
  const iso = padded.tracer.trace(padded.values, level);
  for (let i = 0; i < 2 * iso.points; i++) iso.xy[i] -= 1;
  return iso;
}

/**
 * The raster framed by one cell of −∞ and a tracer for it, for fillRings. Nodata becomes
 * −Number.MAX_VALUE: below every level, and the linear interpolation toward it puts the crossing on
 * the value beside it.
 */
export function paddedRaster(values: ArrayLike<number>, w: number, h: number): { values: Float64Array; tracer: IsolineTracer } {
  const W = w + 2, out = new Float64Array(W * (h + 2)).fill(-Infinity);
  for (let r = 0; r < h; r++) for (let c = 0; c < w; c++) { const v = values[r * w + c]; out[(r + 1) * W + c + 1] = v === v ? v : -Number.MAX_VALUE; }
  return { values: out, tracer: new IsolineTracer(W, h + 2) };
}
