/**
 * depressions.geojson and pour-points.geojson from a `ponds` result, one geometry type a file: a
 * polygon or multipolygon per depression of the chosen outline levels, traced from the label raster
 * and written as it is traced; a point per pour point — streamed from the columns. The command
 * line and the library (src/api/write.ts) write them with the same functions; the command line also
 * writes the same features, in the same pass, as the layers `depressions` and `pour-points` of
 * results.gpkg.
 */
import type { PondsResult } from '../hydro/ponds.js';
import { traceDepressionOutlines, writeOutlineGeometry, outlineCount, outlineRings, type OutlineLevels } from '../hydro/vectors.js';
import type { GpkgLayers, GpkgLayer, GpkgLayerSpec } from '../io/gpkg.js';
import { collectionHead } from '../io/tables.js';
import { TextSink, FeatureCollectionWriter, featureJson, pointJson, formatNumber as jn } from '../io/stream.js';
import { childrenText, type DepressionColumns } from './hydro-common.js';
import { pondsExtras, pondsExtrasJson } from './ponds.js';

type Project = ((x: number, y: number) => [number, number]) | null;

/** The depressions layer of results.gpkg: the properties of depressions.geojson's polygons as typed columns (`into`: NULL for the outside). */
export const DEPRESSIONS_LAYER: GpkgLayerSpec = {
  name: 'depressions',
  geometry: 'MULTIPOLYGON',
  description: 'closed depressions at their spill levels (the polygons of depressions.geojson)',
  columns: [
    ['kind', 'TEXT'], ['id', 'INTEGER'], ['parent', 'INTEGER'], ['level', 'INTEGER'], ['type', 'TEXT'], ['children', 'TEXT'],
    ['pitValue', 'REAL'], ['spillValue', 'REAL'], ['into', 'INTEGER'], ['cells', 'INTEGER'], ['area', 'REAL'], ['volume', 'REAL'],
    ['maxDepth', 'REAL'], ['meanDepth', 'REAL'], ['pourCol', 'INTEGER'], ['pourRow', 'INTEGER'],
    ['catchmentCells', 'INTEGER'], ['catchmentArea', 'REAL'], ['perimeter', 'REAL'], ['majorAxis', 'REAL'], ['minorAxis', 'REAL'],
    ['orientation', 'REAL'], ['elongation', 'REAL'], ['boxRatio', 'REAL'], ['catchmentRatio', 'REAL'],
  ],
};

/** The pour-points layer of results.gpkg: the pour points of depressions.geojson as typed columns (`into`: NULL for the outside). */
export const POUR_POINTS_LAYER: GpkgLayerSpec = {
  name: 'pour-points',
  geometry: 'POINT',
  description: 'the pour point of each depression: the pass its water spills over at the spill level',
  columns: [
    ['kind', 'TEXT'], ['id', 'INTEGER'], ['spillValue', 'REAL'], ['into', 'INTEGER'], ['pourCol', 'INTEGER'], ['pourRow', 'INTEGER'],
    ['toCol', 'INTEGER'], ['toRow', 'INTEGER'], ['toOutside', 'BOOLEAN'],
  ],
};

/** depressionPropsJson's values in DEPRESSIONS_LAYER's column order. */
export function depressionValues(result: PondsResult, cols: DepressionColumns, d: number): (number | string | null)[] {
  const H = result.hierarchy, W = result.grid.width;
  const p = H.parent[d], into = H.into[d], pass = H.spillCell[d], row = Math.floor(pass / W);
  const e = pondsExtras(result, d);
  return ['depression', d, p === 0 ? null : p, H.level[d], H.childStart[d + 1] === H.childStart[d] ? 'leaf' : 'merged', childrenText(H, d, ' '),
    cols.pitValue[d], cols.spillValue[d], into === 0 ? null : into, H.wetCells[d], H.area[d], H.volume[d], cols.maxDepth[d], H.meanDepth[d], pass - row * W, row,
    e.catchmentCells, e.catchmentArea, e.perimeter, e.majorAxis, e.minorAxis, e.orientation, e.elongation, e.boxRatio, e.catchmentRatio];
}

/** The properties of depression `d`'s polygon feature as JSON text, from the columns. */
function depressionPropsJson(result: PondsResult, cols: DepressionColumns, d: number): string {
  const H = result.hierarchy, W = result.grid.width;
  const p = H.parent[d], into = H.into[d], pass = H.spillCell[d], row = Math.floor(pass / W);
  return `{"kind":"depression","id":${d},"parent":${p === 0 ? 'null' : p},"level":${H.level[d]},"type":${H.childStart[d + 1] === H.childStart[d] ? '"leaf"' : '"merged"'}` +
    `,"children":"${childrenText(H, d, ' ')}","pitValue":${jn(cols.pitValue[d])},"spillValue":${jn(cols.spillValue[d])},"into":${into === 0 ? '"outside"' : into}` +
    `,"cells":${jn(H.wetCells[d])},"area":${jn(H.area[d])},"volume":${jn(H.volume[d])},"maxDepth":${jn(cols.maxDepth[d])},"meanDepth":${jn(H.meanDepth[d])}` +
    `,"pourCol":${pass - row * W},"pourRow":${row}${pondsExtrasJson(result, d)}}`;
}

/** What each choice of outline levels outlines, in words. */
const LEVEL_WORDS: Record<OutlineLevels, string> = {
  top: 'the top-level (outermost) closed depressions',
  leaf: 'the leaf (innermost) closed depressions',
  all: 'every closed depression, merged ones over the depressions they hold',
};

/** The `description` member of depressions.geojson for the chosen levels. */
export function depressionsDescription(levels: OutlineLevels): string {
  return `${LEVEL_WORDS[levels]} at their spill levels: one polygon or multipolygon per depression, the outline of its wet cells (pour points are in pour-points.geojson)`;
}

/** The report's and the terminal's note on which outlines depressions.geojson holds. */
export function outlinesNote(levels: OutlineLevels, features: number, total: number): string {
  if (levels === 'all') return `depressions.geojson outlines all ${total} depressions (--outlines all)`;
  const which = levels === 'top' ? 'top-level' : 'leaf';
  return `depressions.geojson outlines the ${features} ${which} depressions of ${total} (--outlines ${levels}; --outlines ${levels === 'top' ? 'leaf' : 'top'} or all for the others)`;
}

/**
 * depressions.geojson (and, with `project`, depressions-wgs84.geojson alongside), streamed: a
 * polygon or multipolygon per depression of the chosen levels, written as it is traced. Returns
 * how many were written.
 */
export function writeDepressionsGeojson(path: string, wgsPath: string | null, result: PondsResult, cols: DepressionColumns, levels: OutlineLevels,
  project: Project, meta: Record<string, unknown>, gpkg: GpkgLayers | null = null): number {
  const g = result.grid, H = result.hierarchy;
  const sink = TextSink.file(path);
  const wgs = wgsPath && project ? TextSink.file(wgsPath) : null;
  try {
    const fc = new FeatureCollectionWriter(sink, collectionHead(g.crs, meta));
    const fw = wgs ? new FeatureCollectionWriter(wgs, collectionHead(null, { ...meta, name: 'depressions-wgs84' })) : null;
    const layer: GpkgLayer | null = gpkg ? gpkg.layer(DEPRESSIONS_LAYER) : null;
    const n = traceDepressionOutlines(g, result.rasters.labels, H, levels, (d, o) => {
      const props = depressionPropsJson(result, cols, d);
      fc.featureWith(d, (k) => writeOutlineGeometry(k, o, g.transform), props);
      fw?.featureWith(d, (k) => writeOutlineGeometry(k, o, g.transform, project), props);
      layer?.polygons(d, outlineRings(o, g.transform), depressionValues(result, cols, d));
    });
    const want = outlineCount(H, levels);
    if (n !== want) throw new Error(`${n} outlines traced for ${want} depressions (internal error)`);
    fc.end();
    fw?.end();
    return n;
  } finally {
    sink.close();
    wgs?.close();
  }
}

/** The `description` member of pour-points.geojson. */
export const POUR_POINTS_DESCRIPTION = 'pour points: for each depression the pass cell where it spills at its spill level (cell centre), with the cell the overflow runs into';

/** pour-points.geojson (and, with `project`, pour-points-wgs84.geojson alongside): a point per depression, streamed from the columns. */
export function writePourPointsGeojson(path: string, wgsPath: string | null, result: PondsResult, cols: DepressionColumns, project: Project, meta: Record<string, unknown>,
  gpkg: GpkgLayers | null = null): void {
  const g = result.grid, H = result.hierarchy, W = g.width;
  const sink = TextSink.file(path);
  const wgs = wgsPath && project ? TextSink.file(wgsPath) : null;
  try {
    const fc = new FeatureCollectionWriter(sink, collectionHead(g.crs, meta));
    const fw = wgs ? new FeatureCollectionWriter(wgs, collectionHead(null, { ...meta, name: 'pour-points-wgs84' })) : null;
    const points: GpkgLayer | null = gpkg ? gpkg.layer(POUR_POINTS_LAYER) : null;
    for (let d = 1; d <= H.count; d++) {
      const pass = H.spillCell[d], row = Math.floor(pass / W), col = pass - row * W;
      const x = g.x(col, row), y = g.y(col, row);
      const into = H.into[d];
      const props = `{"kind":"pour point","id":${d},"spillValue":${jn(cols.spillValue[d])},"into":${into === 0 ? '"outside"' : into},"pourCol":${col},"pourRow":${row}` +
        `,"toCol":${cols.toCol[d]},"toRow":${cols.toRow[d]},"toOutside":${cols.toOutside[d] === 1 ? 'true' : 'false'}}`;
      fc.feature(featureJson(d, pointJson(x, y), props));
      points?.point(d, x, y, ['pour point', d, cols.spillValue[d], into === 0 ? null : into, col, row, cols.toCol[d], cols.toRow[d], cols.toOutside[d] === 1]);
      if (fw && project) { const [px, py] = project(x, y); fw.feature(featureJson(d, pointJson(px, py), props)); }
    }
    fc.end();
    fw?.end();
  } finally {
    sink.close();
    wgs?.close();
  }
}
