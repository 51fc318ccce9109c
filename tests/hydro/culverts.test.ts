/**
 * Culverts (src/hydro/culverts.ts, src/io/culverts.ts) against closed forms.
 *
 * A valley dammed by a ridge: z = s·x + k·y² (a trough sloping down towards the east edge, x = col,
 * y = row − centre) with a ridge of height H across it at column R: upstream of the ridge the trough
 * holds a depression whose spill level is the ridge crest z_R = s·R + H (it overflows the crest where
 * the trough's axis crosses it, then runs down to the east edge). A culvert through the ridge along
 * the axis with invert z₀:
 *  - z₀ above the upstream pit: the spill level becomes z₀ and the volume is Σ (z₀ − z) over the cells
 *    below z₀ upstream — the closed form of the trough's volume, computed here cell by cell from the
 *    formula (not from sill's sweep) — and the depression is reported as shrunk;
 * *  - z₀ below the upstream pit (but not below the ground just downstream, where a lower invert would dig a
 *    sump of its own) or no invert (the lower, downstream end): the depression vanishes;
 *  - properties: the culvert only lowers cells (never raises), only on its line, and the filled DEM
 *    with the culvert is never above the filled DEM without it.
 */
import { describe, it, expect } from 'vitest';
import { writeFileSync, mkdtempSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { Grid } from '../../src/surface/grid.js';
import { ponds } from '../../src/hydro/ponds.js';
import { applyCulverts, culvertEffects, EFFECT_STATUS } from '../../src/hydro/culverts.js';
import { readCulverts } from '../../src/io/culverts.js';
import { InputError } from '../../src/errors.js';

const W = 80, Hh = 41, s = 0.1, k = 0.05, R = 50, RIDGE = 3;
const centre = (Hh - 1) / 2;
const ground = (c: number, r: number) => 20 - s * c + k * (r - centre) ** 2; // falls towards the east edge
function dammed(): Grid {
  const v = new Float64Array(W * Hh);
  for (let r = 0; r < Hh; r++) for (let c = 0; c < W; c++) v[r * W + c] = ground(c, r) + (c === R ? RIDGE : 0) + (c < 2 ? 5 : 0); // a wall at the west edge
  // map x = col + 0.5, y = −(row + 0.5): transform [0, 1, 0, 0, 0, −1]
  return new Grid({ width: W, height: Hh, values: v, transform: [0, 1, 0, 0, 0, -1], crs: { epsg: 32633, geographic: false, linearUnit: 'metre' } });
}
const axisY = -(centre + 0.5);
const culvert = (invert: number | null) => [{ name: 'road culvert', xy: [R - 2 + 0.5, axisY, R + 2 + 0.5, axisY], invert }];

/** Σ (h − z) over the cells west of the ridge below h (cell area 1), from the formula. */
function troughVolume(h: number): number {
  let v = 0;
  for (let r = 0; r < Hh; r++) for (let c = 2; c < R; c++) { const z = ground(c, r); if (z < h) v += h - z; }
  return v;
}

describe('a culvert through a dam', () => {
  const g = dammed();
  const before = ponds(g, { connectivity: 8, euler: false });
  const up = 1; // the one depression: the trough upstream of the ridge
  it('without it, the trough fills to the ridge crest', () => {
    expect(before.hierarchy.count).toBe(1);
    expect(before.hierarchy.spillValue[up]).toBeCloseTo(ground(R, centre) + RIDGE, 12);
  });

  it('an invert above the pit: the spill level becomes the invert and the volume the closed form', () => {
    const pit = before.hierarchy.pitValue[up];
    const z0 = pit + 1.7;
    const { grid: g2, culverts } = applyCulverts(g, culvert(z0));
    expect(culverts[0].invertFrom).toBe('given');
    expect(culverts[0].lowered).toBeGreaterThan(0);
    const after = ponds(g2, { connectivity: 8, euler: false });
    const H = after.hierarchy;
    expect(H.count).toBe(1);
    expect(H.spillValue[1]).toBe(z0);
    expect(Math.abs(H.volume[1] - troughVolume(z0)) / troughVolume(z0)).toBeLessThan(1e-12);
    const fx = culvertEffects(before.hierarchy, H, after.rasters.labels);
    expect(fx.counts.shrank).toBe(1);
    expect(EFFECT_STATUS[fx.changed.status[0]]).toBe('shrank');
    expect(fx.changed.volumeAfter[0]).toBe(H.volume[1]);
    // never raises, only on the line; the filled DEM never rises
    const line = new Set(culverts[0].cells);
    for (let i = 0; i < g.size; i++) {
      expect(g2.values[i]).toBeLessThanOrEqual(g.values[i]);
      if (!line.has(i)) expect(g2.values[i]).toBe(g.values[i]);
      expect(after.rasters.filled[i]).toBeLessThanOrEqual(before.rasters.filled[i]);
    }
  });

  it('no invert (the lower end) or one below the pit: the depression vanishes', () => {
    for (const inv of [null, before.hierarchy.pitValue[up] - 0.05]) {
      const { grid: g2, culverts } = applyCulverts(g, culvert(inv));
      if (inv === null) expect(culverts[0].invertFrom).toBe('lower end');
      const after = ponds(g2, { connectivity: 8, euler: false });
      expect(after.hierarchy.count).toBe(0);
      const fx = culvertEffects(before.hierarchy, after.hierarchy, after.rasters.labels);
      expect(fx.counts.vanished).toBe(1);
    }
  });

  it('the line is open in 4-connectivity too (a 4-connected chain of cells)', () => {
    const { grid: g2 } = applyCulverts(g, [{ name: 'diagonal', xy: [R - 3 + 0.5, axisY - 2, R + 3 + 0.5, axisY + 2], invert: before.hierarchy.pitValue[up] - 0.05 }]);
    expect(ponds(g2, { connectivity: 4, euler: false }).hierarchy.count).toBe(0);
  });
});

describe('culvert files', () => {
  const g = dammed();
  const dir = mkdtempSync(join(tmpdir(), 'sill-culv-'));
  const file = (name: string, text: string) => { const p = join(dir, name); writeFileSync(p, text); return p; };
  it('GeoJSON LineStrings with invert and name, and CSV rows', () => {
    const gj = file('c.geojson', JSON.stringify({ type: 'FeatureCollection', crs: { type: 'name', properties: { name: 'urn:ogc:def:crs:EPSG::32633' } }, features: [
      { type: 'Feature', properties: { name: 'A7 culvert', invert: 12.5 }, geometry: { type: 'LineString', coordinates: [[48.5, -20.5], [52.5, -20.5]] } },
      { type: 'Feature', properties: {}, geometry: { type: 'MultiLineString', coordinates: [[[10.5, -5.5], [11.5, -6.5], [12.5, -6.5]]] } },
    ] }));
    expect(readCulverts(gj, g)).toEqual([
      { name: 'A7 culvert', xy: [48.5, -20.5, 52.5, -20.5], invert: 12.5 },
      { name: 'culvert 2', xy: [10.5, -5.5, 11.5, -6.5, 12.5, -6.5], invert: null },
    ]);
    const csv = file('c.csv', 'name,x1,y1,x2,y2,invert\nfarm pipe,48.5,-20.5,52.5,-20.5,\n# a comment\n,10.5,-5.5,12.5,-6.5,13\n');
    expect(readCulverts(csv, g)).toEqual([
      { name: 'farm pipe', xy: [48.5, -20.5, 52.5, -20.5], invert: null },
      { name: 'culvert 2', xy: [10.5, -5.5, 12.5, -6.5], invert: 13 },
    ]);
  });

  const bad: [string, string, RegExp][] = [
    ['outside the grid', 'x1,y1,x2,y2\n500,-20,510,-20\n', /outside the DEM/],
    ['lon/lat on a projected DEM', JSON.stringify({ type: 'FeatureCollection', features: [{ type: 'Feature', properties: {}, geometry: { type: 'LineString', coordinates: [[13.4, 52.5], [13.5, 52.5]] } }] }), /looks like longitude\/latitude/],
    ['another CRS', JSON.stringify({ type: 'FeatureCollection', crs: { type: 'name', properties: { name: 'urn:ogc:def:crs:EPSG::4326' } }, features: [] }), /CRS is .*EPSG::4326.* reproject/],
    ['a polygon', JSON.stringify({ type: 'FeatureCollection', features: [{ type: 'Feature', properties: {}, geometry: { type: 'Polygon', coordinates: [] } }] }), /feature 1 is a Polygon/],
    ['a bad invert', JSON.stringify({ type: 'FeatureCollection', features: [{ type: 'Feature', properties: { invert: 'low' }, geometry: { type: 'LineString', coordinates: [[10.5, -5.5], [12.5, -5.5]] } }] }), /invert "low"/],
    ['unparsable JSON', '{"type": "FeatureCollection", ', /not valid JSON/],
    ['a CSV without the header', '1,2,3,4\n', /header must name x1,y1,x2,y2/],
    ['a CSV with text', 'x1,y1,x2,y2\n1,2,three,4\n', /line 2: x2 'three' is not a number/],
    ['empty', 'x1,y1,x2,y2\n', /holds no culvert lines/],
  ];
  for (const [name, text, msg] of bad) {
    it(`refuses ${name} with one line`, () => {
      const p = file(`bad-${name.replace(/\W+/g, '-')}`, text);
      let err: unknown;
      try { readCulverts(p, g); } catch (e) { err = e; }
      expect(err).toBeInstanceOf(InputError);
      expect((err as Error).message).toMatch(msg);
      expect((err as Error).message).not.toMatch(/\n/);
    });
  }
});
