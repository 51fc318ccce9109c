/**
 * Cell areas. Geographic grids: the closed-form ellipsoidal cell area against GeographicLib
 * (npm geographiclib-geodesic) polygon areas on WGS84. A cell edge along a parallel is not a
 * geodesic, so each parallel is followed by k geodesic chords; the chord error falls as 1/k²,
 * and Richardson extrapolation of k = 64 and 128 removes it. Projected grids: the area of the
 * parallelogram spanned by the transform's columns, |dx·dy − rx·ry| (common practice).
 */
import { describe, it, expect } from 'vitest';
import geographiclib from 'geographiclib-geodesic';
import { cellAreas, ellipsoidalCellArea } from '../../src/hydro/areas.js';
import { ponds } from '../../src/hydro/ponds.js';
import { Grid, type GeoTransform, type Crs } from '../../src/surface/grid.js';
import { InputError } from '../../src/errors.js';

const geod = geographiclib.Geodesic.WGS84;

function geodesicCellArea(lat1: number, lat2: number, lon1: number, lon2: number): number {
  const area = (k: number) => {
    const p = geod.Polygon(false);
    for (let i = 0; i <= k; i++) p.AddPoint(lat1, lon1 + ((lon2 - lon1) * i) / k);
    for (let i = 0; i <= k; i++) p.AddPoint(lat2, lon2 - ((lon2 - lon1) * i) / k);
    const a = p.Compute(false, true).area;
    if (a === undefined) throw new Error('GeographicLib gave no area');
    return Math.abs(a);
  };
  return (4 * area(128) - area(64)) / 3;
}

const WGS84: Crs = { epsg: 4326, geographic: true, linearUnit: 'degree' };
const UTM: Crs = { epsg: 32633, geographic: false, linearUnit: 'metre' };

function grid(w: number, h: number, transform: GeoTransform, crs: Crs | null): Grid {
  const v = new Float64Array(w * h);
  for (let i = 0; i < v.length; i++) v[i] = (i * 7919) % 13;
  return new Grid({ width: w, height: h, values: v, transform, crs });
}

describe('ellipsoidal cell areas match GeographicLib to 1e-9', () => {
  const cases: [string, number][] = [['1°', 1], ['3″', 1 / 1200]];
  for (const [name, d] of cases) {
    for (const lat of [-89, -60, -33.5, 0, 12, 45, 70, 89]) {
      it(`${name} cell at latitude ${lat}`, () => {
        const lat2 = Math.min(90, lat + d);
        const want = geodesicCellArea(lat, lat2, 10, 10 + d);
        const got = ellipsoidalCellArea(lat, lat2, d);
        expect(Math.abs(got - want) / want).toBeLessThan(1e-9);
      });
    }
  }

  it('per-row areas of a geographic grid (north-up and south-up) follow the rows', () => {
    const g = grid(4, 3, [10, 1 / 1200, 0, 46, 0, -1 / 1200], WGS84);
    const a = cellAreas(g);
    expect(a.uniform).toBe(false);
    for (let r = 0; r < 3; r++) {
      const want = geodesicCellArea(46 - (r + 1) / 1200, 46 - r / 1200, 10, 10 + 1 / 1200);
      expect(Math.abs(a.rowArea[r] - want) / want).toBeLessThan(1e-9);
    }
    const s = cellAreas(grid(4, 3, [10, 1, 0, -30, 0, 1], WGS84));
    expect(Math.abs(s.rowArea[0] - geodesicCellArea(-30, -29, 10, 11)) / s.rowArea[0]).toBeLessThan(1e-9);
    expect(a.units.area).toBe('m²');
  });
});

describe('projected and unreferenced cell areas', () => {
  it('rotated, non-square cells: |det| of the transform (metres, feet)', () => {
    const t: GeoTransform = [1000, 3, 1, 2000, 0.5, -2];
    expect(cellAreas(grid(3, 3, t, UTM)).rowArea[0]).toBeCloseTo(Math.abs(3 * -2 - 1 * 0.5), 12);
    const ft = cellAreas(grid(3, 3, t, { epsg: 2263, geographic: false, linearUnit: 'US survey foot' }));
    expect(ft.rowArea[0]).toBeCloseTo(6.5 * (1200 / 3937) ** 2, 12);
  });

  it('no CRS: areas in map units², or metres with --xy-units; the units say which', () => {
    const g = grid(3, 3, [0, 2, 0, 0, 0, -2], null);
    const a = cellAreas(g);
    expect(a.rowArea[0]).toBe(4);
    expect(a.units.area).toBe('map unit²');
    expect(a.units.notes.join(' ')).toMatch(/no CRS/);
    expect(cellAreas(g, { xyUnits: 'ft' }).rowArea[0]).toBeCloseTo(4 * 0.3048 ** 2, 12);
    expect(cellAreas(g, { xyUnits: 'deg' }).uniform).toBe(false);
  });

  it('vertical units: --z-units and --z-factor scale volumes, not elevations', () => {
    const v = new Float64Array([5, 5, 5, 5, 0, 5, 5, 5, 5]);
    const mk = () => new Grid({ width: 3, height: 3, values: v.slice(), transform: [0, 10, 0, 0, 0, -10], crs: UTM });
    const m = ponds(mk(), {});
    const ft = ponds(mk(), { zUnits: 'ft' });
    const f = ponds(mk(), { zFactor: 0.01 });
    expect(m.hierarchy.volume[1]).toBe(500);
    expect(ft.hierarchy.volume[1]).toBeCloseTo(500 * 0.3048, 9);
    expect(f.hierarchy.volume[1]).toBeCloseTo(5, 12);
    expect(ft.hierarchy.spillValue[1]).toBe(5);
    expect(ft.areas.units.elevation).toBe('ft');
  });

  it('refuses units that contradict the CRS, unknown units and impossible latitudes', () => {
    const bad: [() => unknown, RegExp][] = [
      [() => cellAreas(grid(3, 3, [0, 1, 0, 95, 0, -1], WGS84)), /beyond ±90/],
      [() => cellAreas(grid(3, 3, [512000, 5, 0, 5874000, 0, -5], WGS84)), /look projected/],
      [() => cellAreas(grid(3, 3, [0, 1, 0.1, 50, 0, -1], WGS84)), /rotated/],
      [() => cellAreas(grid(3, 3, [0, 5, 0, 0, 0, -5], UTM), { xyUnits: 'ft' }), /contradicts the CRS/],
      [() => cellAreas(grid(3, 3, [0, 5, 0, 0, 0, -5], UTM), { xyUnits: 'deg' }), /contradicts the CRS/],
      [() => cellAreas(grid(3, 3, [0, 1, 0, 0, 0, -1], WGS84), { xyUnits: 'm' }), /contradicts the CRS/],
      [() => cellAreas(grid(3, 3, [0, 5, 0, 0, 0, -5], null), { xyUnits: 'furlong' }), /--xy-units must be one of/],
      [() => cellAreas(grid(3, 3, [0, 5, 0, 0, 0, -5], null), { zUnits: 'yard' }), /--z-units must be one of/],
      [() => cellAreas(grid(3, 3, [0, 5, 0, 0, 0, -5], null), { zUnits: 'ft', zFactor: 0.3 }), /not both/],
      [() => cellAreas(grid(3, 3, [0, 5, 0, 0, 0, -5], { epsg: 9999, geographic: false, linearUnit: 'chain' })), /cannot convert/],
    ];
    for (const [f, msg] of bad) {
      let err: unknown = null;
      try { f(); } catch (e) { err = e; }
      expect(err).toBeInstanceOf(InputError);
      expect((err as Error).message).toMatch(msg);
      expect((err as Error).message).not.toMatch(/\n/);
    }
  });
});
