/**
 * --wgs84 reprojection (proj4) against GDAL/OSR with PROJ and the EPSG database
 * (fixtures/hydro/wgs84-reference.json, made by tests/reference/wgs84_reference.py).
 * WGS84-based CRSs must agree to 1e-8 degrees (about a millimetre). ETRS89 and NAD83 are
 * treated as WGS84 (null datum shift), which agrees with PROJ's default choice to 1e-8 degrees
 * too where PROJ also uses a null shift, and is allowed 2e-5 degrees (about 2 m) otherwise.
 */
import { describe, it, expect } from 'vitest';
import { readFileSync } from 'node:fs';
import { toWgs84 } from '../../src/hydro/reproject.js';
import { InputError } from '../../src/errors.js';
import { HYDRO_FIXTURES } from './helpers.js';

const ref = JSON.parse(readFileSync(HYDRO_FIXTURES + 'wgs84-reference.json', 'utf8')) as {
  gdal_version: string; proj_version: string; points: { epsg: number; x: number; y: number; lon: number; lat: number }[];
};

describe(`WGS84 reprojection agrees with GDAL ${ref.gdal_version} / PROJ ${ref.proj_version}`, () => {
  for (const p of ref.points) {
    const wgsBased = (p.epsg >= 32601 && p.epsg <= 32760) || p.epsg === 3857;
    it(`EPSG:${p.epsg} (${p.x}, ${p.y})`, () => {
      const [lon, lat] = toWgs84({ epsg: p.epsg, geographic: false })(p.x, p.y);
      const tol = wgsBased ? 1e-8 : 2e-5;
      expect(Math.abs(lon - p.lon)).toBeLessThan(tol);
      expect(Math.abs(lat - p.lat)).toBeLessThan(tol);
    });
  }

  it('refuses CRSs it cannot reproject, with one line saying what to do', () => {
    for (const crs of [null, { geographic: false }, { epsg: 27700, geographic: false }, { epsg: 4269, geographic: true }]) {
      let err: unknown = null;
      try { toWgs84(crs); } catch (e) { err = e; }
      expect(err).toBeInstanceOf(InputError);
      expect((err as Error).message).toMatch(/--wgs84/);
    }
    expect(toWgs84({ epsg: 4326, geographic: true })(10, 50)).toEqual([10, 50]);
  });
});
