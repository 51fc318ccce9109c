/**
 * Spill paths: where a full depression's overflow runs.
 *
 * When depression D is full, its water leaves at the pour point: from the pass cell to the cell
 * beyond it, then down by the steepest-descent rule of runoff and the catchments (docs/runoff.md)
 * until it arrives (where a pit counts for the depression its catchment says: the innermost one that
 * holds it, also when the pit is a flat lying exactly at that depression's spill level):
 *  - off the map (a cell next to an outlet: the path ends at the outlet beyond it), or
 *  - at a pit. When D spills into a depression E (D and E meet at the pass), the descent stays in E's
 *    component below the pass, so it ends at a pit inside E. When D spills to the outside, the descent
 *    may end at the pit of another depression F lower down, which is full by then (it reached the
 *    outside below D's spill level): the path stops there, and the network goes on with F's own path
 *    (and its parents'), so no stretch downstream is written once per depression upstream of it.
 *    A pit that no reported depression holds (a flat, or a depression the filters removed) has no
 *    path of its own: the water crosses it and leaves where its outermost component spills
 *    (`Catchments.resume`), so the path goes on from that pass as a new part; without that table
 *    such a pit ends the path.
 * A path is a list of parts (a MultiLineString); the jump across a full lake between two parts is not
 * counted in the length. Every part runs downhill on the DEM, and so on the filled surface too.
 * Paths are made one at a time into reused buffers: memory is the longest path, never all of them.
 */
import geographiclib from 'geographiclib-geodesic';
import type { Grid } from '../surface/grid.js';
import type { GridComplex } from '../surface/complex.js';
import type { Hierarchy } from './hierarchy.js';
import { descentStepper, stepWeights, STEP_PIT, STEP_OFF_MAP } from './runoff-route.js';

/** The ring of neighbours an outlet is looked for in, per connectivity (axis neighbours first). */
const OUTLET_RING: Record<number, readonly (readonly [number, number])[]> = {
  4: [[1, 0], [0, 1], [-1, 0], [0, -1]],
  6: [[1, 0], [1, 1], [0, 1], [-1, 0], [-1, -1], [0, -1]],
  8: [[1, 0], [0, 1], [-1, 0], [0, -1], [1, 1], [-1, 1], [-1, -1], [1, -1]],
};

/**
 * The outlet next to `cell` that its water leaves through: the first neighbour in OUTLET_RING order
 * that is off the grid or (with draining nodata) a nodata cell, as [col, row] (off the grid for the
 * edge); null when the cell touches no outlet.
 */
export function outletNeighbour(g: Grid, connectivity: number, nodataOutlet: boolean, cell: number): [number, number] | null {
  const W = g.width, v = g.values;
  return outletNeighbourOf(W, g.height, connectivity, nodataOutlet, cell, (c, r) => Number.isNaN(v[r * W + c]));
}

/**
 * outletNeighbour on a grid of `width` × `height` cells whose values are not at hand as one array
 * (a mosaic read tile by tile): `isNodata(col, row)` tells whether a cell of the grid is nodata.
 */
export function outletNeighbourOf(width: number, height: number, connectivity: number, nodataOutlet: boolean, cell: number,
  isNodata: (col: number, row: number) => boolean): [number, number] | null {
  const row = Math.floor(cell / width), col = cell - row * width;
  for (const [dc, dr] of OUTLET_RING[connectivity] ?? OUTLET_RING[8]) {
    const c = col + dc, r = row + dr;
    if (c < 0 || r < 0 || c >= width || r >= height || (nodataOutlet && isNodata(c, r))) return [c, r];
  }
  return null;
}

export type Arrival = { kind: 'outside' } | { kind: 'depression'; id: number } | { kind: 'pit' };

export interface SpillPath {
  /** The depression that spills. */
  from: number;
  /** Vertex coordinates of all parts, x and y interleaved (map units), and where each part starts (in vertices). */
  xy: Float64Array;
  vertices: number;
  partStart: Int32Array;
  parts: number;
  /** Where the water arrives in the end. */
  arrives: Arrival;
  /** Length of the parts (map units; metres along the WGS84 ellipsoid on a geographic grid), and spill level − last cell's value. */
  length: number;
  drop: number;
}

/** A maker of spill paths over one ponds result; `path(d)` reuses its buffers (copy what you keep). */
export class SpillPaths {
  private readonly step: (i: number) => number;
  private xy = new Float64Array(256);
  private partStart = new Int32Array(16);
  private stamp = 0;
  private readonly seenResume: Int32Array;

  constructor(
    private readonly g: Grid,
    cx: GridComplex,
    private readonly hier: Hierarchy,
    /** The catchment of each cell (`Catchments.labels`: the innermost depression holding the pit its water reaches). */
    private readonly catchment: Int32Array,
    private readonly connectivity: number,
    private readonly nodataOutlet: boolean,
    private readonly geographic: boolean,
    /** `Catchments.resume`: where water reaching a pit of no reported depression goes on. */
    private readonly resume: { pit: Int32Array; pass: Int32Array; to: Int32Array } | null = null,
  ) {
    this.seenResume = new Int32Array(resume ? resume.pit.length : 0);
    this.step = descentStepper(cx, stepWeights(g.transform, g.height, cx.connectivity, geographic));
  }

  path(d: number): SpillPath {
    const H = this.hier, g = this.g, W = g.width;
    this.stamp++;
    let n = 0, parts = 0, length = 0, last = -1;
    let arrives: Arrival = { kind: 'outside' };
    let px = NaN, py = NaN;
    const add = (col: number, row: number): void => {
      if (2 * n + 2 > this.xy.length) { const b = new Float64Array(2 * this.xy.length); b.set(this.xy); this.xy = b; }
      const x = g.x(col, row), y = g.y(col, row);
      if (n > (parts > 0 ? this.partStart[parts - 1] : 0)) length += this.distance(px, py, x, y);
      this.xy[2 * n] = x; this.xy[2 * n + 1] = y;
      px = x; py = y; n++;
    };
    const addCell = (i: number): void => { const r = Math.floor(i / W); add(i - r * W, r); last = i; };
    const newPart = (): void => {
      if (parts === this.partStart.length) { const b = new Int32Array(2 * parts); b.set(this.partStart); this.partStart = b; }
      this.partStart[parts++] = n;
    };
    // the pass the water leaves at and the cell beyond it (−2: the pass touches an outlet)
    let pass = H.spillCell[d], to = H.pourTo[d];
    // each later part starts from a resume entry not used before on this path, so it ends
    for (;;) {
      newPart();
      addCell(pass);
      if (to < 0) {
        const o = outletNeighbour(g, this.connectivity, this.nodataOutlet, pass);
        if (o === null) throw new Error(`internal: a pass spills to the outside at cell ${pass}, which touches no outlet`);
        add(o[0], o[1]);
        arrives = { kind: 'outside' };
        break;
      }
      let i = to, s: number;
      for (;;) {
        addCell(i);
        s = this.step(i);
        if (s < 0) break;
        i = s;
      }
      if (s === STEP_OFF_MAP) {
        const o = outletNeighbour(g, this.connectivity, this.nodataOutlet, i)!;
        add(o[0], o[1]);
        arrives = { kind: 'outside' };
        break;
      }
      if (s !== STEP_PIT) throw new Error(`internal: a spill path from depression ${d} reached a nodata cell`);
      const t = this.catchment[i]; // the depression holding this pit (at a tie on a rim: the one it joins)
      if (t > 0) {
        // the receiving depression — or, when this one spills to the outside, a lower one that is full
        // already: the network goes on with that one's own spill path (one feature per depression, so
        // no stretch downstream is written twice)
        arrives = { kind: 'depression', id: t };
        break;
      }
      // a pit no reported depression holds (a flat, or one the filters removed): on from where it spills
      const q = this.resumeAt(i);
      if (q < 0 || this.seenResume[q] === this.stamp) { arrives = { kind: 'pit' }; break; }
      this.seenResume[q] = this.stamp;
      pass = this.resume!.pass[q]; to = this.resume!.to[q];
    }
    const lastValue = last >= 0 ? g.values[last] : NaN;
    return {
      from: d, xy: this.xy, vertices: n, partStart: this.partStart, parts, arrives,
      length, drop: H.spillValue[d] - lastValue,
    };
  }

  /** Index of pit cell `i` in `resume` (binary search), or −1. */
  private resumeAt(i: number): number {
    const r = this.resume;
    if (r === null) return -1;
    let lo = 0, hi = r.pit.length - 1;
    while (lo <= hi) {
      const m = (lo + hi) >> 1, v = r.pit[m];
      if (v === i) return m;
      if (v < i) lo = m + 1; else hi = m - 1;
    }
    return -1;
  }

  private distance(x1: number, y1: number, x2: number, y2: number): number {
    if (!this.geographic) return Math.hypot(x2 - x1, y2 - y1);
    return geographiclib.Geodesic.WGS84.Inverse(y1, x1, y2, x2, geographiclib.Geodesic.DISTANCE).s12 ?? NaN;
  }
}
