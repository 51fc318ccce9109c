/**
 * depressions.geojson from a `ponds` result: a polygon per depression, traced from the label
 * raster and written as it is traced, then a point per pour point — streamed from the columns.
 * The command line and the library (src/api/write.ts) write it with the same function.
 */
import type { PondsResult } from '../hydro/ponds.js';
import { traceDepressionOutlines, type FlatPolygon } from '../hydro/vectors.js';
import { collectionHead } from '../io/tables.js';
import { TextSink, FeatureCollectionWriter, featureJson, pointJson, writePolygons, formatNumber as jn } from '../io/stream.js';
import { childrenText, type DepressionColumns } from './hydro-common.js';
import { pondsExtrasJson } from './ponds.js';

/** The properties of depression `d`'s polygon feature as JSON text, from the columns. */
function depressionPropsJson(result: PondsResult, cols: DepressionColumns, d: number): string {
  const H = result.hierarchy, W = result.grid.width;
  const p = H.parent[d], into = H.into[d], pass = H.spillCell[d], row = Math.floor(pass / W);
  return `{"kind":"depression","id":${d},"parent":${p === 0 ? 'null' : p},"level":${H.level[d]},"type":${H.childStart[d + 1] === H.childStart[d] ? '"leaf"' : '"merged"'}` +
    `,"children":"${childrenText(H, d, ' ')}","pitValue":${jn(cols.pitValue[d])},"spillValue":${jn(cols.spillValue[d])},"into":${into === 0 ? '"outside"' : into}` +
    `,"cells":${jn(H.wetCells[d])},"area":${jn(H.area[d])},"volume":${jn(H.volume[d])},"maxDepth":${jn(cols.maxDepth[d])},"meanDepth":${jn(H.meanDepth[d])}` +
    `,"pourCol":${pass - row * W},"pourRow":${row}${pondsExtrasJson(result, d)}}`;
}

/** A traced outline's geometry, written into the sink: null when it was left out, else its polygons (an empty MultiPolygon for none). */
function writeOutline(sink: TextSink, polygons: FlatPolygon[] | null, project: ((x: number, y: number) => [number, number]) | null): void {
  if (polygons === null) sink.write('null');
  else if (polygons.length === 0) sink.write('{"type":"MultiPolygon","coordinates":[]}');
  else writePolygons(sink, polygons, project);
}

/**
 * depressions.geojson (and, with `project`, depressions-wgs84.geojson alongside), streamed: the
 * collection's members, a polygon per depression as its outline is traced (null geometry when it
 * was left out), then a point per pour point. Returns the tracing's counts.
 */
export function writeDepressionsGeojson(path: string, wgsPath: string | null, result: PondsResult, cols: DepressionColumns,
  project: ((x: number, y: number) => [number, number]) | null, meta: Record<string, unknown>): { traced: number; omitted: number } {
  const g = result.grid, H = result.hierarchy, W = g.width;
  const sink = TextSink.file(path);
  const wgs = wgsPath && project ? TextSink.file(wgsPath) : null;
  try {
    const fc = new FeatureCollectionWriter(sink, collectionHead(g.crs, meta));
    const fw = wgs ? new FeatureCollectionWriter(wgs, collectionHead(null, { ...meta, name: 'depressions-wgs84' })) : null;
    const counts = traceDepressionOutlines(g, result.rasters.labels, H, (d, polygons) => {
      const props = depressionPropsJson(result, cols, d);
      fc.featureWith(d, (k) => writeOutline(k, polygons, null), props);
      fw?.featureWith(d, (k) => writeOutline(k, polygons, project), props);
    });
    for (let d = 1; d <= H.count; d++) {
      const pass = H.spillCell[d], row = Math.floor(pass / W), col = pass - row * W;
      const x = g.x(col, row), y = g.y(col, row);
      const into = H.into[d];
      const props = `{"kind":"pour point","id":${d},"spillValue":${jn(cols.spillValue[d])},"into":${into === 0 ? '"outside"' : into},"pourCol":${col},"pourRow":${row}` +
        `,"toCol":${cols.toCol[d]},"toRow":${cols.toRow[d]},"toOutside":${cols.toOutside[d] === 1 ? 'true' : 'false'}}`;
      fc.feature(featureJson(undefined, pointJson(x, y), props));
      if (fw && project) { const [px, py] = project(x, y); fw.feature(featureJson(undefined, pointJson(px, py), props)); }
    }
    fc.end();
    fw?.end();
    return counts;
  } finally {
    sink.close();
    wgs?.close();
  }
}
