/**
 * Depression outlines (src/hydro/vectors.ts). The polygons follow cell edges, so their area
 * (shoelace formula, in map units) equals the wet cells × cell area exactly, on north-up, south-up
 * and rotated grids, at every level of the nesting; exterior rings run counter-clockwise and holes
 * clockwise (RFC 7946 §3.1.6); cells of one depression that meet only at a corner are separate
 * parts. Outside sources: GDAL/OGR with GEOS (python3-gdal, live) for the Simple Features validity
 * of every outline, OGR's areas and ogr2ogr's conversion to GeoPackage; GeographicLib (npm
 * geographiclib-geodesic) for the areas of outlines on a geographic grid.
 */
import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { spawnSync } from 'node:child_process';
import geographiclib from 'geographiclib-geodesic';
import { pondsReport } from '../../src/report/ponds.js';
import { runoff } from '../../src/hydro/runoff.js';
import { depressionOutlines, traceDepressionOutlines, traceOutlines, writeOutlineGeometry, ringArea, type OutlineLevels, type Outline } from '../../src/hydro/vectors.js';
import { traceBodyOutlines } from '../../src/hydro/runoff-vectors.js';
import { Grid, type GeoTransform } from '../../src/surface/grid.js';
import { fractalTerrain } from '../../bench/lib/terrain.mjs';
import { randomGrid, fillReference, gridOf } from './helpers.js';
import { tempDir } from '../cli/run.js';
import { PYTHON as PY, runs } from '../prereq.js';

const hasGdal = runs('gdal');

type Poly = [number, number][][];

/** Σ signed ring areas; checks closure and orientation (exterior > 0, holes < 0) on the way. */
function polygonArea(polys: Poly[]): number {
  let a = 0;
  for (const p of polys) {
    p.forEach((ring, k) => {
      const s = ringArea(ring);
      if (k === 0) expect(s).toBeGreaterThan(0); else expect(s).toBeLessThan(0);
      expect(ring[0]).toEqual(ring[ring.length - 1]);
      a += s;
    });
  }
  return a;
}

const transforms: GeoTransform[] = [
  [500000, 5, 0, 5800000, 0, -5],
  [500000, 5, 0, 5800000, 0, 5],
  [100, 3, 1, 200, 0.5, -2],
  [0, 1, 0, 0, 0, 1],
];

/**
 * A random DEM with many cells that meet only at a corner: a checkerboard of low and high values
 * (with random exceptions), so that the wet cells at a spill level often touch diagonally only.
 */
function cornerGrid(seed: number, w: number, h: number, t: GeoTransform): Grid {
  let s = seed >>> 0 || 1;
  const rnd = () => ((s = (Math.imul(s, 1664525) + 1013904223) >>> 0) / 2 ** 32);
  const v = new Float64Array(w * h);
  for (let r = 0; r < h; r++) {
    for (let c = 0; c < w; c++) {
      const high = ((c + r) & 1) === 0 ? rnd() > 0.15 : rnd() < 0.15;
      v[r * w + c] = high ? 6 + Math.floor(rnd() * 4) : Math.floor(rnd() * 5);
    }
  }
  return new Grid({ width: w, height: h, values: v, transform: t, crs: null });
}

/** Which ids a level outlines. */
function levelIds(parent: (d: number) => number, leaf: (d: number) => boolean, n: number, levels: OutlineLevels): number[] {
  const ids: number[] = [];
  for (let d = 1; d <= n; d++) if (levels === 'all' || (levels === 'leaf' ? leaf(d) : parent(d) === 0)) ids.push(d);
  return ids;
}

/** The outline as [x, y] rings in grid-corner units (no transform), for the hand-made cases. */
function cornerRings(o: Outline): Poly[] {
  const out: Poly[] = [];
  for (let p = 0; p < o.polygons; p++) {
    const poly: Poly = [];
    for (let k = o.polyStart[p]; k < o.polyStart[p + 1]; k++) {
      const ring: [number, number][] = [];
      for (let i = o.ringStart[k]; i < o.ringStart[k + 1]; i++) ring.push([o.x[i], o.y[i]]);
      ring.push(ring[0]);
      poly.push(ring);
    }
    out.push(poly);
  }
  return out;
}

/** Outlines of a flat partition given as rows of labels (identity transform: rings in cell units, y down). */
function flatOutlines(rows: number[][]): Map<number, Poly[]> {
  const h = rows.length, w = rows[0].length;
  const labels = Int32Array.from(rows.flat());
  let n = 0;
  for (const v of labels) n = Math.max(n, v);
  const keyOf = Int32Array.from({ length: n + 1 }, (_, i) => i);
  const out = new Map<number, Poly[]>();
  traceOutlines(labels, w, h, { kind: 'flat', keyOf, count: n }, false, (id, o) => out.set(id, cornerRings(o)));
  return out;
}

describe('depression outlines', () => {
  it('area = wet cells × cell area at every level; rings closed, oriented, on cell corners, turning at every vertex (property test)', () => {
    fc.assert(fc.property(fc.integer(), fc.integer({ min: 3, max: 16 }), fc.integer({ min: 3, max: 16 }), fc.constantFrom(...transforms), fc.constantFrom<4 | 6 | 8>(4, 6, 8),
      fc.constantFrom<OutlineLevels>('leaf', 'top', 'all'), fc.boolean(),
      (seed, w, h, t, conn, levels, corners) => {
        const g = corners ? cornerGrid(seed, w, h, t) : new Grid({ width: w, height: h, values: randomGrid(seed, w, h, 4, 0.1).values, transform: t, crs: null });
        let lo = Infinity, hi = -Infinity;
        for (const z of g.values) if (z === z) { lo = Math.min(lo, z); hi = Math.max(hi, z); }
        fc.pre(hi > lo);
        const { result, report } = pondsReport(g, { connectivity: conn, euler: false });
        const H = result.hierarchy;
        const outlines = depressionOutlines(g, result.rasters.labels, H, levels);
        expect(outlines.map((o) => o.id)).toEqual(levelIds((d) => H.parent[d], (d) => H.childStart[d + 1] === H.childStart[d], H.count, levels));
        const cellArea = Math.abs(t[1] * t[5] - t[2] * t[4]);
        const [x0, dx, rx, y0, ry, dy] = t, det = dx * dy - rx * ry;
        for (const o of outlines) {
          const d = report.depressions.at(o.id - 1);
          expect(polygonArea(o.polygons)).toBeCloseTo(d.cells * cellArea, 6);
          expect(d.area).toBeCloseTo(d.cells * cellArea, 9);
          for (const p of o.polygons) {
            for (const ring of p) {
              const n = ring.length - 1;
              expect(n % 2).toBe(0);
              for (let i = 0; i < n; i++) {
                // back to (column, row): whole numbers (cell corners)
                const [x, y] = ring[i];
                const c = ((x - x0) * dy - (y - y0) * rx) / det, r = ((y - y0) * dx - (x - x0) * ry) / det;
                expect(Math.abs(c - Math.round(c))).toBeLessThan(1e-6);
                expect(Math.abs(r - Math.round(r))).toBeLessThan(1e-6);
                // the ring turns at every vertex (collinear vertices merged)
                const [ax, ay] = ring[(i + n - 1) % n], [bx, by] = ring[(i + 1) % n];
                expect(Math.abs((x - ax) * (by - y) - (y - ay) * (bx - x))).toBeGreaterThan(1e-9 * cellArea);
              }
            }
          }
        }
      }), { numRuns: 250 });
  });

  it('the streamed geometry text is the GeoJSON of the same rings (Polygon for one part, MultiPolygon for several), projected when asked', () => {
    const t: GeoTransform = [100, 3, 1, 200, 0.5, -2];
    const g = cornerGrid(11, 14, 12, t);
    const { result } = pondsReport(g, { euler: false });
    const lists = depressionOutlines(g, result.rasters.labels, result.hierarchy, 'all');
    const project = (x: number, y: number): [number, number] => [y / 7, x * 3];
    let k = 0;
    traceDepressionOutlines(g, result.rasters.labels, result.hierarchy, 'all', (id, o) => {
      const polys = lists[k++].polygons;
      expect(lists[k - 1].id).toBe(id);
      const geometry = (p: Poly[]) => (p.length === 1 ? { type: 'Polygon', coordinates: p[0] } : { type: 'MultiPolygon', coordinates: p });
      let text = '';
      writeOutlineGeometry({ write: (s) => { text += s; } }, o, t);
      expect(text).toBe(JSON.stringify(geometry(polys)));
      text = '';
      writeOutlineGeometry({ write: (s) => { text += s; } }, o, t, project);
      expect(text).toBe(JSON.stringify(geometry(polys.map((p) => p.map((r) => r.map(([x, y]) => project(x, y)))))));
    });
    expect(k).toBe(lists.length);
  });

  it('cells that meet only at a corner: separate parts of a MultiPolygon, touching at that point', () => {
    const o = flatOutlines([[1, 0], [0, 1]]).get(1)!;
    expect(o).toEqual([[[[0, 0], [1, 0], [1, 1], [0, 1], [0, 0]]], [[[1, 1], [2, 1], [2, 2], [1, 2], [1, 1]]]]);
    // four cells round an empty centre, each touching two others at a corner: four squares, no hole
    const diamond = flatOutlines([[0, 1, 0], [1, 0, 1], [0, 1, 0]]).get(1)!;
    expect(diamond).toHaveLength(4);
    for (const p of diamond) expect(p).toHaveLength(1);
  });

  it('a piece that touches itself at a corner: one exterior and a hole touching it at that point, never a self-touching ring', () => {
    // the empty cell (1, 1) is closed in on three sides and open to the outside only through the corner (2, 2)
    const o = flatOutlines([[1, 1, 1], [1, 0, 1], [1, 1, 0]]).get(1)!;
    expect(o).toHaveLength(1);
    const [shell, hole] = o[0];
    expect(o[0]).toHaveLength(2);
    expect(hole.slice(0, -1).sort()).toEqual([[1, 1], [1, 2], [2, 1], [2, 2]].sort());
    expect(shell.slice(0, -1).filter(([x, y]) => x === 2 && y === 2)).toHaveLength(1);
    // identity transform: (column, row) with rows down, so the map's turning sense is the screen's mirror
    expect(ringArea(shell)).toBe(8);
    expect(ringArea(hole)).toBe(-1);
    // and the same with the two regions swapped: the empty cell's region is a single square
    const two = flatOutlines([[1, 1, 1], [1, 2, 1], [1, 1, 2]]);
    expect(two.get(2)).toHaveLength(2);
    expect(two.get(1)![0]).toHaveLength(2);
  });

  it('bowls: the merged depression is one polygon holding both nested ones, in map coordinates', () => {
    const c = fillReference().cases.find((x) => x.name === 'bowls-c8')!;
    const t: GeoTransform = [300000, 2, 0, 6000000, 0, -2];
    const g0 = gridOf(c.width, c.height, c.values);
    const g = new Grid({ width: c.width, height: c.height, values: g0.values, transform: t, crs: { epsg: 32633, geographic: false, linearUnit: 'metre' } });
    const { result, report } = pondsReport(g, {});
    const top = report.depressions.filter((d) => d.parent === null);
    expect(top).toHaveLength(1);
    for (const levels of ['top', 'all'] as const) {
      const o = depressionOutlines(g, result.rasters.labels, result.hierarchy, levels).find((x) => x.id === top[0].id)!;
      expect(o.polygons).toHaveLength(1);
      const xs = o.polygons[0][0].map((p) => p[0]), ys = o.polygons[0][0].map((p) => p[1]);
      // corners of cells: x = 300000 + 2·col, y = 6000000 − 2·row
      for (const x of xs) expect(Number.isInteger((x - 300000) / 2)).toBe(true);
      for (const y of ys) expect(Number.isInteger((6000000 - y) / 2)).toBe(true);
      expect(Math.min(...xs)).toBeGreaterThanOrEqual(300000);
      expect(Math.max(...ys)).toBeLessThanOrEqual(6000000);
      expect(polygonArea(o.polygons)).toBe(top[0].cells * 4);
    }
    // the leaves are the two bowls, each within the merged outline
    const leaves = depressionOutlines(g, result.rasters.labels, result.hierarchy, 'leaf');
    expect(leaves.map((o) => o.id)).toEqual(report.depressions.filter((d) => d.children.length === 0).map((d) => d.id));
  });

  it('a ring-shaped depression has a hole', () => {
    // a moat of 0 around an island of 5 inside a rim of 9, with one notch of 6
    const v: number[] = [];
    for (let r = 0; r < 9; r++) for (let c = 0; c < 9; c++) {
      const edge = r === 0 || c === 0 || r === 8 || c === 8;
      const island = r >= 3 && r <= 5 && c >= 3 && c <= 5;
      v.push(edge ? (r === 4 && c === 8 ? 6 : 9) : island ? 8 : 0);
    }
    const g = gridOf(9, 9, v);
    const { result, report } = pondsReport(g, {});
    const d = report.depressions.find((x) => x.parent === null)!;
    expect(d.spillValue).toBe(6);
    const [o] = depressionOutlines(g, result.rasters.labels, result.hierarchy, 'top');
    expect(o.id).toBe(d.id);
    expect(o.polygons).toHaveLength(1);
    expect(o.polygons[0]).toHaveLength(2);
    expect(polygonArea(o.polygons)).toBe(49 - 9);
  });
});

/** Signed GeographicLib area of a lon/lat ring, parallels followed by k geodesic chords, extrapolated (k = 64, 128). */
function geodesicRingArea(ring: [number, number][]): number {
  const geod = geographiclib.Geodesic.WGS84;
  const area = (k: number): number => {
    const p = geod.Polygon(false);
    for (let i = 0; i + 1 < ring.length; i++) {
      const [lon1, lat1] = ring[i], [lon2, lat2] = ring[i + 1];
      // a cell edge along a parallel is not a geodesic: follow it with k chords (meridians are geodesics)
      const steps = lat1 === lat2 ? k : 1;
      for (let j = 0; j < steps; j++) p.AddPoint(lat1 + ((lat2 - lat1) * j) / steps, lon1 + ((lon2 - lon1) * j) / steps);
    }
    const a = p.Compute(false, true).area;
    if (a === undefined) throw new Error('GeographicLib gave no area');
    return a;
  };
  return (4 * area(128) - area(64)) / 3;
}

describe('outlines on a geographic grid (GeographicLib)', () => {
  it('the polygon area of each outline in longitude/latitude equals the depression\'s area to 1e-9', () => {
    // 3″ cells near 46° N, north-up; a rough random DEM (many nested and corner-touching depressions)
    const t: GeoTransform = [10, 1 / 1200, 0, 46, 0, -1 / 1200];
    const base = cornerGrid(7, 24, 18, t);
    const g = new Grid({ width: 24, height: 18, values: base.values, transform: t, crs: { epsg: 4326, geographic: true, linearUnit: 'degree' } });
    const { result, report } = pondsReport(g, { euler: false });
    expect(report.units.area).toBe('m²');
    const outlines = depressionOutlines(g, result.rasters.labels, result.hierarchy, 'all');
    expect(outlines).toHaveLength(report.depressions.length);
    let multi = 0;
    for (const o of outlines) {
      if (o.polygons.length > 1) multi++;
      let a = 0;
      for (const p of o.polygons) for (const ring of p) a += geodesicRingArea(ring);
      const want = result.hierarchy.area[o.id];
      // Source: GeographicLib's polygon area on WGS84 (counter-clockwise positive)
      expect(Math.abs(a - want) / want).toBeLessThan(1e-9);
    }
    expect(multi).toBeGreaterThan(0);
  });
});

describe('catchment outlines on a geographic grid (GeographicLib)', () => {
  it('the polygon area of each catchment (every level) in longitude/latitude equals its catchmentArea to 1e-9', () => {
    const t: GeoTransform = [10, 1 / 1200, 0, 46, 0, -1 / 1200];
    const base = cornerGrid(11, 22, 16, t);
    const g = new Grid({ width: 22, height: 16, values: base.values, transform: t, crs: { epsg: 4326, geographic: true, linearUnit: 'degree' } });
    const { result } = pondsReport(g, { euler: false, catchments: 'raster' });
    const C = result.catchments!;
    const outlines = depressionOutlines(g, C.labels!, result.hierarchy, 'all');
    expect(outlines.length).toBeGreaterThan(3);
    for (const o of outlines) {
      let a = 0;
      for (const p of o.polygons) for (const ring of p) a += geodesicRingArea(ring);
      // Source: GeographicLib's polygon area on WGS84 (counter-clockwise positive)
      expect(Math.abs(a - C.area[o.id]) / C.area[o.id]).toBeLessThan(1e-9);
    }
  });
});

describe.skipIf(!hasGdal)('GEOS accepts every outline (GDAL/OGR, live)', () => {
  it('valid Simple Features, OGR area = reported area to 1e-9, ogr2ogr converts to GeoPackage without a warning', () => {
    const dir = tempDir('sill-outlines-');
    const features: string[] = [];
    let n = 0;
    const add = (g: Grid, levels: OutlineLevels | 'ponds', area: (id: number) => number) => (id: number, o: Outline) => {
      let geom = '';
      writeOutlineGeometry({ write: (s) => { geom += s; } }, o, g.transform);
      features.push(`{"type":"Feature","id":${++n},"geometry":${geom},"properties":{"levels":"${levels}","id":${id},"area":${area(id)}}}`);
    };
    const outline = (g: Grid, conn: 4 | 6 | 8 = 8) => {
      const { result } = pondsReport(g, { connectivity: conn, euler: false });
      const H = result.hierarchy;
      for (const levels of ['leaf', 'top', 'all'] as const) traceDepressionOutlines(g, result.rasters.labels, H, levels, add(g, levels, (d) => H.area[d]));
    };
    const t: GeoTransform = [500000, 5, 0, 5800000, 0, -5];
    // random DEMs with many cells meeting at a corner (fast-check's generator, fixed seed)
    for (const [seed, w, h, conn] of fc.sample(fc.tuple(fc.integer(), fc.integer({ min: 4, max: 24 }), fc.integer({ min: 4, max: 24 }), fc.constantFrom<4 | 6 | 8>(4, 6, 8)), { numRuns: 60, seed: 17 })) {
      outline(cornerGrid(seed, w, h, t), conn);
    }
    // the committed DEM fixtures (fixtures/hydro/fill-reference.json)
    for (const c of fillReference().cases) {
      const g0 = gridOf(c.width, c.height, c.values);
      outline(new Grid({ width: c.width, height: c.height, values: g0.values, transform: t, crs: null }), c.connectivity);
    }
    // a rough terrain like the benchmark's (bench/lib/terrain.mjs), and the ponds runoff leaves on it
    const size = 160;
    const g = new Grid({ width: size, height: size, values: fractalTerrain(size, { seed: 17 }), transform: t, crs: null });
    outline(g);
    const ro = runoff(g, { depth: 0.04, euler: false });
    const B = ro.bodies;
    traceBodyOutlines(g, ro.rasters.bodies, B.count, add(g, 'ponds', (b) => B.area[b]));
    const path = join(dir, 'outlines.geojson');
    writeFileSync(path, `{"type":"FeatureCollection","features":[${features.join(',')}]}\n`);
    // Source: GDAL/OGR with GEOS — IsValid() (OGC Simple Features), GetArea(), ogr2ogr to GeoPackage
    const script = `
import json, sys, subprocess
from osgeo import ogr, gdal
gdal.UseExceptions()
ds = ogr.Open(sys.argv[1])
lay = ds.GetLayer(0)
bad, worst, types, holes, parts = [], 0.0, set(), 0, 0
for f in lay:
    g = f.GetGeometryRef()
    types.add(g.GetGeometryName())
    if not g.IsValid():
        bad.append(f.GetFID())
    want = f.GetField('area')
    worst = max(worst, abs(g.GetArea() - want) / want)
    polys = [g.GetGeometryRef(i) for i in range(g.GetGeometryCount())] if g.GetGeometryName() == 'MULTIPOLYGON' else [g]
    parts += len(polys)
    holes += sum(p.GetGeometryCount() - 1 for p in polys)
p = subprocess.run(['ogr2ogr', '-f', 'GPKG', sys.argv[2], sys.argv[1]], capture_output=True, text=True)
print(json.dumps({'n': lay.GetFeatureCount(), 'bad': bad[:10], 'nbad': len(bad), 'worst': worst, 'types': sorted(types), 'holes': holes, 'parts': parts,
                  'ogr2ogr': p.returncode, 'stderr': p.stderr}))
`;
    const py = spawnSync(PY, ['-c', script, path, join(dir, 'outlines.gpkg')], { encoding: 'utf8' });
    expect(py.status, py.stderr).toBe(0);
    const r = JSON.parse(py.stdout);
    expect(r.n).toBe(n);
    expect(r.nbad, `invalid: ${r.bad}`).toBe(0);
    expect(r.worst).toBeLessThan(1e-9);
    expect(r.types).toEqual(['MULTIPOLYGON', 'POLYGON']);
    // the cases did exercise holes and corner-touching parts
    expect(r.holes).toBeGreaterThan(100);
    expect(r.parts).toBeGreaterThan(n + 100);
    expect(r.ogr2ogr).toBe(0);
    expect(r.stderr).toBe('');
  });
});
