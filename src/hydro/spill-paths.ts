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
 *    may still end at the pit of another depression F lower down, which is full by then (it reached
 *    the outside below D's spill level): the water crosses F's lake and leaves at the pour point of
 *    F's outermost depression, so the path goes on from there as a new part. A pit that no reported
 *    depression holds (a flat, or a depression the filters removed) ends the path.
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
  const W = g.width, row = Math.floor(cell / W), col = cell - row * W;
  for (const [dc, dr] of OUTLET_RING[connectivity] ?? OUTLET_RING[8]) {
    const c = col + dc, r = row + dr;
    if (c < 0 || r < 0 || c >= W || r >= g.height || (nodataOutlet && Number.isNaN(g.values[r * W + c]))) return [c, r];
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
  private readonly seen: Int32Array;
  private readonly top: Int32Array;
  private stamp = 0;

  constructor(
    private readonly g: Grid,
    cx: GridComplex,
    private readonly hier: Hierarchy,
    /** The catchment of each cell (`Catchments.labels`: the innermost depression holding the pit its water reaches). */
    private readonly catchment: Int32Array,
    private readonly connectivity: number,
    private readonly nodataOutlet: boolean,
    private readonly geographic: boolean,
  ) {
    this.step = descentStepper(cx, stepWeights(g.transform, g.height, cx.connectivity, geographic));
    this.seen = new Int32Array(hier.count + 1);
    const top = new Int32Array(hier.count + 1);
    for (let d = hier.count; d >= 1; d--) top[d] = hier.parent[d] > 0 ? top[hier.parent[d]] : d;
    this.top = top;
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
    let cur = d;
    for (;;) {
      this.seen[cur] = this.stamp;
      newPart();
      addCell(H.spillCell[cur]);
      const to = H.pourTo[cur];
      if (to < 0) {
        const o = outletNeighbour(g, this.connectivity, this.nodataOutlet, H.spillCell[cur]);
        if (o === null) throw new Error(`internal: depression ${cur} spills to the outside at a cell that touches no outlet`);
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
      if (s !== STEP_PIT) throw new Error(`internal: the descent from depression ${cur}'s pour point reached a nodata cell`);
      const t = this.catchment[i]; // the depression holding this pit (at a tie on a rim: the one it joins)
      if (t <= 0) { arrives = { kind: 'pit' }; break; }
      if (H.into[cur] !== 0) { arrives = { kind: 'depression', id: t }; break; }
      // spilled to the outside but ran into a full depression: on from its outermost one's pour point
      const next = this.top[t];
      if (this.seen[next] === this.stamp) { arrives = { kind: 'depression', id: t }; break; }
      cur = next;
    }
    const lastValue = last >= 0 ? g.values[last] : NaN;
    return {
      from: d, xy: this.xy, vertices: n, partStart: this.partStart, parts, arrives,
      length, drop: H.spillValue[d] - lastValue,
    };
  }

  private distance(x1: number, y1: number, x2: number, y2: number): number {
    if (!this.geographic) return Math.hypot(x2 - x1, y2 - y1);
    return geographiclib.Geodesic.WGS84.Inverse(y1, x1, y2, x2, geographiclib.Geodesic.DISTANCE).s12 ?? NaN;
  }
}
