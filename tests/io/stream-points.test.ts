/**
 * The streamed GeoJSON point writer. Outside source: `JSON.stringify` of the same collection built
 * as objects (featureCollection and pointFeature, src/io/tables.ts), which it must equal byte for byte.
 */
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { withFileSink, writePointCollection } from '../../src/io/stream.js';
import { collectionHead, featureCollection, pointFeature } from '../../src/io/tables.js';

function capture(f: Parameters<typeof withFileSink>[1]): string {
  const dir = mkdtempSync(join(tmpdir(), 'sill-points-'));
  try {
    withFileSink(join(dir, 'p.geojson'), f);
    return readFileSync(join(dir, 'p.geojson'), 'utf8');
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

// no −0: JSON.stringify writes it "0", the streamed writer keeps "-0" on purpose
const coord = fc.double({ noNaN: true, noDefaultInfinity: true }).map((x) => (Object.is(x, -0) ? 0 : x));
const point = fc.record({
  x: coord, y: coord,
  props: fc.record({ kind: fc.constantFrom('pit', 'pass', 'peak', 'a "quoted" ünïcode\n'), value: coord, col: fc.option(fc.integer(), { nil: null }), onEdge: fc.boolean() }),
});

describe('writePointCollection', () => {
  it('equals featureCollection of pointFeatures, with and without a CRS', () => {
    fc.assert(fc.property(fc.array(point, { maxLength: 40 }), fc.constantFrom(null, { epsg: 32633 }, { epsg: 4326, geographic: true }), (pts, crs) => {
      const want = featureCollection(pts.map((p, k) => pointFeature(p.x, p.y, p.props, k)), crs, { name: 'critical-points' });
      const got = capture((sink) => {
        writePointCollection(sink, collectionHead(crs, { name: 'critical-points' }), pts.length, (i) => pts[i].x, (i) => pts[i].y, (i) => pts[i].props);
        sink.write('\n');
      });
      expect(got).toBe(want);
    }), { numRuns: 200 });
  });
});
