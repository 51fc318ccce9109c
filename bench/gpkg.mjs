#!/usr/bin/env node
/**
 * Writing results.gpkg (src/io/gpkg.ts) against writing the same features as GeoJSON, measured in
 * the same run on the same outlines.
 *
 *   npm run build && node --expose-gc bench/gpkg.mjs [--size 2000] [--repeat 3]
 *
 * The bench fractal terrain (bench/lib/terrain.mjs, seed 17; ≈ 84 000 depressions at 2000²) is
 * analysed once by `ponds`; its outlines are traced once and kept (this script only: the commands
 * write each outline as it is traced). Then, alternating round by round:
 *  - geojson  the depression polygons and pour points as one GeoJSON FeatureCollection (the text
 *             writer depressions.geojson uses: FeatureCollectionWriter, writePolygons);
 *  - gpkg     the same features as results.gpkg's layers depressions and pour-points
 *             (GeoPackage binary geometries, typed columns, the R-tree, the extents, the triggers).
 * Reports best wall and CPU time of the rounds, rows per second, file sizes, and the median
 * round-by-round ratio gpkg / geojson. A report, not a test: exits 0.
 */
import { parseArgs } from 'node:util';
import { mkdtempSync, rmSync, statSync } from 'node:fs';
import { tmpdir, loadavg, cpus } from 'node:os';
import { join } from 'node:path';
import { fractalTerrain } from './lib/terrain.mjs';
import { importDist, lap, collect, median, fmtMs, table } from './lib/util.mjs';

const { values: opt } = parseArgs({ options: { size: { type: 'string', default: '2000' }, repeat: { type: 'string', default: '3' } } });
const size = Number(opt.size), repeat = Math.max(1, Number(opt.repeat));

const { Grid } = await importDist('surface/grid.js');
const { pondsReport } = await importDist('report/ponds.js');
const { traceDepressionOutlines } = await importDist('hydro/vectors.js');
const { GeoPackageWriter } = await importDist('io/gpkg.js');
const { TextSink, FeatureCollectionWriter, featureJson, pointJson, writePolygons } = await importDist('io/stream.js');
const { collectionHead } = await importDist('io/tables.js');
const { DEPRESSIONS_LAYER, POUR_POINTS_LAYER, depressionValues } = await importDist('report/depressions-geojson.js');

const values = Float32Array.from(fractalTerrain(size, { seed: 17 }));
const grid = new Grid({ width: size, height: size, values, transform: [512000, 10, 0, 5874000 + size * 10, 0, -10], crs: { epsg: 32633 } });
const analysis = lap(() => pondsReport(grid, { connectivity: 8, boundary: 'open', nodataOutlet: true, threads: 1 }, 'fractal'));
const { result, report } = analysis.out;
const H = result.hierarchy, cols = report.depressions.columns, W = size;
const tracing = lap(() => {
  const outlines = new Array(H.count + 1).fill(null);
  traceDepressionOutlines(grid, result.rasters.labels, H, (d, polygons) => { outlines[d] = polygons; });
  return outlines;
});
const outlines = tracing.out;
console.log(`${size} × ${size} fractal: ${H.count} depressions (${report.counts.leaf} leaf, ${report.counts.merged} merged); analysis ${fmtMs(analysis.wall)}, tracing ${fmtMs(tracing.wall)}`);

const pour = (d) => {
  const pass = H.spillCell[d], row = Math.floor(pass / W), col = pass - row * W;
  return { col, row, x: grid.x(col, row), y: grid.y(col, row), into: H.into[d] };
};

function writeGeojson(path) {
  const sink = TextSink.file(path);
  try {
    const fc = new FeatureCollectionWriter(sink, collectionHead(grid.crs, { name: 'depressions' }));
    for (let d = 1; d <= H.count; d++) {
      const v = depressionValues(result, cols, d);
      const props = JSON.stringify(Object.fromEntries(DEPRESSIONS_LAYER.columns.map(([n], k) => [n, v[k]])));
      const p = outlines[d];
      fc.featureWith(d, (k) => { if (p === null) k.write('null'); else writePolygons(k, p); }, props);
    }
    for (let d = 1; d <= H.count; d++) {
      const q = pour(d);
      fc.feature(featureJson(undefined, pointJson(q.x, q.y), JSON.stringify({ kind: 'pour point', id: d, spillValue: cols.spillValue[d], into: q.into || null, pourCol: q.col, pourRow: q.row, toCol: cols.toCol[d], toRow: cols.toRow[d], toOutside: cols.toOutside[d] === 1 })));
    }
    fc.end();
  } finally {
    sink.close();
  }
}

function writeGpkg(path) {
  const gp = new GeoPackageWriter(path, grid.crs, { lastChange: new Date(0) });
  const dl = gp.layer(DEPRESSIONS_LAYER);
  for (let d = 1; d <= H.count; d++) dl.polygons(d, outlines[d], depressionValues(result, cols, d));
  const pl = gp.layer(POUR_POINTS_LAYER);
  for (let d = 1; d <= H.count; d++) {
    const q = pour(d);
    pl.point(d, q.x, q.y, ['pour point', d, cols.spillValue[d], q.into || null, q.col, q.row, cols.toCol[d], cols.toRow[d], cols.toOutside[d] === 1]);
  }
  gp.finish();
}

const dir = mkdtempSync(join(tmpdir(), 'sill-bench-gpkg-'));
const runs = { geojson: [], gpkg: [] };
const sizes = {};
try {
  for (let r = 0; r < repeat; r++) {
    for (const [name, write, file] of [['geojson', writeGeojson, 'depressions.geojson'], ['gpkg', writeGpkg, 'results.gpkg']]) {
      collect();
      const path = join(dir, file);
      runs[name].push(lap(() => write(path)));
      sizes[name] = statSync(path).size;
      rmSync(path);
    }
  }
} finally {
  rmSync(dir, { recursive: true, force: true });
}

const best = (xs, k) => Math.min(...xs.map((x) => x[k]));
const rows = 2 * H.count;
console.log(`load average ${loadavg().map((x) => x.toFixed(1)).join(' ')} on ${cpus().length} cores; ${repeat} rounds, best of each`);
console.log(table([
  ['writer', 'wall', 'CPU', 'features / s (CPU)', 'file size'],
  ...['geojson', 'gpkg'].map((n) => [n, fmtMs(best(runs[n], 'wall')), fmtMs(best(runs[n], 'cpu')), Math.round(rows / (best(runs[n], 'cpu') / 1000)).toLocaleString('en'), `${(sizes[n] / 1e6).toFixed(1)} MB`]),
]));
const ratio = (k) => median(runs.gpkg.map((g, i) => g[k] / runs.geojson[i][k]));
console.log(`gpkg / geojson (median of rounds): ${ratio('wall').toFixed(2)} × wall, ${ratio('cpu').toFixed(2)} × CPU; ${rows} features (${H.count} polygons, ${H.count} points)`);
