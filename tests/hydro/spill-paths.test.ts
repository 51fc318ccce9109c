/**
 * Spill paths (src/hydro/spill-paths.ts) against sources outside sill:
 *  - analytic: two paraboloid bowls of different depth side by side, z = min((x+a)² + y² − b, (x−a)² + y²).
 *    The shallow bowl fills and spills over the ridge into the deep one; steepest descent on a
 *    paraboloid runs straight towards its centre (the gradient of (x+a)² + y² points along the radius),
 *    so from a pass on the axis y = 0 the path runs along that axis to the deep bowl's pit, and its
 *    drop is the spill level minus the pit value. The merged pair spills off the map.
 *  - properties (fast-check, random grids with ties and nodata, 4 and 8 connectivity): every part runs
 *    downhill on the DEM and the filled surface never rises along the whole path (with no filters: the
 *    lakes it crosses are filled); a depression that
 *    spills into another arrives inside it; one that spills to the outside arrives outside (across flats
 *    and depressions the filters removed), or in a lower depression that is already full.
 */
import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { Grid } from '../../src/surface/grid.js';
import { ponds, type PondsResult } from '../../src/hydro/ponds.js';
import { SpillPaths } from '../../src/hydro/spill-paths.js';
import { seededValues } from '../morse/arbitraries.js';

function pathsOf(res: PondsResult): SpillPaths {
  return new SpillPaths(res.grid, res.complex, res.hierarchy, res.catchments!.labels!, res.options.connectivity, res.options.nodataOutlet, false, res.catchments!.resume);
}

describe('spill paths on two bowls', () => {
  it('the shallow bowl spills along the axis into the deep bowl\'s pit; the pair spills off the map', () => {
    const w = 61, h = 41, a = 12, b = 30;
    const v = new Float64Array(w * h);
    for (let r = 0; r < h; r++) {
      for (let c = 0; c < w; c++) {
        const x = c - 30, y = 20 - r;
        v[r * w + c] = Math.min((x + a) ** 2 + y * y - b, (x - a) ** 2 + y * y);
      }
    }
    const g = new Grid({ width: w, height: h, values: v, transform: [0, 1, 0, h, 0, -1] });
    const res = ponds(g, { connectivity: 8, euler: false, catchments: 'raster' });
    const H = res.hierarchy;
    expect(H.count).toBe(3);
    const deep = [1, 2, 3].find((d) => H.pitValue[d] === -b)!;
    const shallow = [1, 2, 3].find((d) => H.pitValue[d] === 0)!;
    expect(H.into[shallow]).toBe(deep);
    const paths = pathsOf(res);
    const p = paths.path(shallow);
    expect(p.parts).toBe(1);
    expect(p.arrives).toEqual({ kind: 'depression', id: deep });
    // from the pass on the axis y = 0 (row 20) to the deep pit at x = −a, always westwards and within one
    // cell of the axis: the continuous path is the axis itself; on the lattice the cell beyond the pass may
    // sit a diagonal step off it, and a step along a row drops more than a diagonal step back (by
    // 2(x+a) − 1 over 1 against 2(x+a) over √2) until close to the pit
    const ys = [], xs = [];
    for (let k = 0; k < p.vertices; k++) { xs.push(p.xy[2 * k]); ys.push(p.xy[2 * k + 1]); }
    const axis = g.y(0, 20);
    expect(ys[0]).toBe(axis);
    for (const y of ys) expect(Math.abs(y - axis)).toBeLessThanOrEqual(1);
    expect(xs[xs.length - 1]).toBe(g.x(30 - a, 20));
    expect(ys[ys.length - 1]).toBe(axis);
    for (let k = 1; k < xs.length; k++) expect(xs[k]).toBeLessThan(xs[k - 1]);
    let len = 0;
    for (let k = 1; k < xs.length; k++) len += Math.hypot(xs[k] - xs[k - 1], ys[k] - ys[k - 1]);
    expect(p.length).toBeCloseTo(len, 12);
    expect(p.drop).toBe(H.spillValue[shallow] - -b);
    // the merged pair leaves the map
    const merged = [1, 2, 3].find((d) => d !== deep && d !== shallow)!;
    const q = paths.path(merged);
    expect(q.arrives).toEqual({ kind: 'outside' });
    const lx = q.xy[2 * q.vertices - 2], ly = q.xy[2 * q.vertices - 1];
    const outside = lx < 0 || lx > w || ly < 0 || ly > h;
    expect(outside).toBe(true);
  });
});

describe('spill paths on random grids (fast-check)', () => {
  it('run downhill, never rise on the filled surface, and arrive where the hierarchy says', () => {
    const grids = fc.record({
      w: fc.integer({ min: 4, max: 22 }), h: fc.integer({ min: 4, max: 22 }),
      levels: fc.integer({ min: 2, max: 40 }), hole: fc.constantFrom(0, 0.05, 0.2), seed: fc.integer(),
      conn: fc.constantFrom(4 as const, 8 as const), minDepth: fc.constantFrom(0, 0, 2),
    });
    fc.assert(fc.property(grids, ({ w, h, levels, hole, seed, conn, minDepth }) => {
      const g = new Grid({ width: w, height: h, values: seededValues(w, h, levels, hole, seed) });
      let res: PondsResult;
      try { res = ponds(g, { connectivity: conn, minDepth, euler: false, catchments: 'raster' }); } catch { return; }
      const H = res.hierarchy, filled = res.rasters.filled, z = g.values;
      const paths = pathsOf(res);
      // map coordinates back to cells (transform [0,1,0,0,0,1]: x = col + 0.5, y = row + 0.5)
      const cellAt = (k: number, p: { xy: Float64Array }) => {
        const c = p.xy[2 * k] - 0.5, r = p.xy[2 * k + 1] - 0.5;
        return c < 0 || r < 0 || c >= w || r >= h || Number.isNaN(z[r * w + c]) ? -1 : r * w + c;
      };
      for (let d = 1; d <= H.count; d++) {
        const p = paths.path(d);
        let prevFilled = Infinity;
        for (let part = 0; part < p.parts; part++) {
          // depressions removed by a filter are not filled: a jump over one (from its pit to its pass) may rise
          if (minDepth > 0) prevFilled = Infinity;
          const end = part + 1 < p.parts ? p.partStart[part + 1] : p.vertices;
          let prev = Infinity;
          for (let k = p.partStart[part]; k < end; k++) {
            const i = cellAt(k, p);
            if (i < 0) { expect(k).toBe(p.vertices - 1); continue; } // the outlet beyond the last cell
            expect(z[i]).toBeLessThanOrEqual(prev);
            expect(filled[i]).toBeLessThanOrEqual(prevFilled);
            prev = z[i]; prevFilled = filled[i];
          }
        }
        const into = H.into[d];
        if (into > 0) {
          expect(p.arrives.kind).toBe('depression');
          const t = (p.arrives as { id: number }).id;
          expect(H.tin[into] <= H.tin[t] && H.tin[t] < H.tout[into]).toBe(true);
        } else {
          // to the map's edge (across flats and removed depressions), or into a lower depression that is
          // full already: it reached the outside at or below this spill level
          if (p.arrives.kind === 'depression') {
            let top = p.arrives.id;
            while (H.parent[top] > 0) top = H.parent[top];
            expect(H.spillValue[top]).toBeLessThanOrEqual(H.spillValue[d]);
            expect(top).not.toBe(d);
          } else expect(p.arrives.kind).toBe('outside');
        }
        expect(p.drop).toBeGreaterThanOrEqual(0);
      }
    }), { numRuns: 250, seed: 5 });
  });
});
