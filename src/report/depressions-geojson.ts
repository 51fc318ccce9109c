/**
 * depressions.geojson and pour-points.geojson from a `ponds` result, one geometry type a file: a
 * polygon or multipolygon per depression of the chosen outline levels, traced from the label raster
 * and written as it is traced; a point per pour point — streamed from the columns. The command
 * line and the library (src/api/write.ts) write them with the same functions.
 */
import type { PondsResult } from '../hydro/ponds.js';
import { traceDepressionOutlines, writeOutlineGeometry, outlineCount, type OutlineLevels } from '../hydro/vectors.js';
import { collectionHead } from '../io/tables.js';
import { TextSink, FeatureCollectionWriter, featureJson, pointJson, formatNumber as jn } from '../io/stream.js';
import { childrenText, type DepressionColumns } from './hydro-common.js';
import { pondsExtrasJson } from './ponds.js';

type Project = ((x: number, y: number) => [number, number]) | null;

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
  project: Project, meta: Record<string, unknown>): number {
  const g = result.grid, H = result.hierarchy;
  const sink = TextSink.file(path);
  const wgs = wgsPath && project ? TextSink.file(wgsPath) : null;
  try {
    const fc = new FeatureCollectionWriter(sink, collectionHead(g.crs, meta));
    const fw = wgs ? new FeatureCollectionWriter(wgs, collectionHead(null, { ...meta, name: 'depressions-wgs84' })) : null;
    const n = traceDepressionOutlines(g, result.rasters.labels, H, levels, (d, o) => {
      const props = depressionPropsJson(result, cols, d);
      fc.featureWith(d, (k) => writeOutlineGeometry(k, o, g.transform), props);
      fw?.featureWith(d, (k) => writeOutlineGeometry(k, o, g.transform, project), props);
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
export function writePourPointsGeojson(path: string, wgsPath: string | null, result: PondsResult, cols: DepressionColumns, project: Project, meta: Record<string, unknown>): void {
  const g = result.grid, H = result.hierarchy, W = g.width;
  const sink = TextSink.file(path);
  const wgs = wgsPath && project ? TextSink.file(wgsPath) : null;
  try {
    const fc = new FeatureCollectionWriter(sink, collectionHead(g.crs, meta));
    const fw = wgs ? new FeatureCollectionWriter(wgs, collectionHead(null, { ...meta, name: 'pour-points-wgs84' })) : null;
    for (let d = 1; d <= H.count; d++) {
      const pass = H.spillCell[d], row = Math.floor(pass / W), col = pass - row * W;
      const x = g.x(col, row), y = g.y(col, row);
      const into = H.into[d];
      const props = `{"kind":"pour point","id":${d},"spillValue":${jn(cols.spillValue[d])},"into":${into === 0 ? '"outside"' : into},"pourCol":${col},"pourRow":${row}` +
        `,"toCol":${cols.toCol[d]},"toRow":${cols.toRow[d]},"toOutside":${cols.toOutside[d] === 1 ? 'true' : 'false'}}`;
      fc.feature(featureJson(d, pointJson(x, y), props));
      if (fw && project) { const [px, py] = project(x, y); fw.feature(featureJson(d, pointJson(px, py), props)); }
    }
    fc.end();
    fw?.end();
  } finally {
    sink.close();
    wgs?.close();
  }
}
