/**
 * catchments.geojson: the catchment of each depression of the chosen outline levels (`--outlines`,
 * as depressions.geojson), a polygon or multipolygon along cell edges traced from the catchment raster
 * by the same tracer as the depressions' outlines (valid Simple Features; a merged depression's
 * catchment is the union of its children's and its own — the cells whose label lies in its subtree).
 * Written as traced, one feature at a time; with `gpkg`, the same features as the layer `catchments`.
 */
import type { PondsResult } from '../hydro/ponds.js';
import { traceDepressionOutlines, writeOutlineGeometry, outlineRings, type OutlineLevels } from '../hydro/vectors.js';
import { collectionHead } from '../io/tables.js';
import { TextSink, FeatureCollectionWriter, formatNumber as jn } from '../io/stream.js';
import type { GpkgLayers, GpkgLayerSpec } from '../io/gpkg.js';

/** The catchments layer of results.gpkg: the properties of catchments.geojson as typed columns. */
export const CATCHMENTS_LAYER: GpkgLayerSpec = {
  name: 'catchments',
  geometry: 'MULTIPOLYGON',
  description: 'the land whose water reaches each depression (the polygons of catchments.geojson)',
  columns: [['kind', 'TEXT'], ['id', 'INTEGER'], ['parent', 'INTEGER'], ['level', 'INTEGER'], ['catchmentCells', 'INTEGER'], ['catchmentArea', 'REAL']],
};

/**
 * Write catchments.geojson at `path` from the catchment of every cell (`result.catchments.labels`, innermost
 * ids); returns how many catchments were written.
 */
export function writeCatchmentsGeojson(path: string, result: PondsResult, catchments: Int32Array, levels: OutlineLevels,
  meta: { units: unknown; caution: string }, gpkg: GpkgLayers | null = null): number {
  const g = result.grid, H = result.hierarchy, C = result.catchments;
  if (!C) throw new Error('internal: catchments.geojson needs the catchments');
  const sink = TextSink.file(path);
  try {
    const fc = new FeatureCollectionWriter(sink, collectionHead(g.crs, {
      name: 'catchments',
      description: `catchments of the ${levels === 'all' ? 'depressions' : levels === 'top' ? 'top-level depressions' : 'innermost depressions'}: the cells whose water reaches each one's pits (merged depressions: their children's too)`,
      units: meta.units, caution: meta.caution,
    }));
    const layer = gpkg ? gpkg.layer(CATCHMENTS_LAYER) : null;
    const n = traceDepressionOutlines(g, catchments, H, levels, (d, o) => {
      const p = H.parent[d];
      const props = `{"kind":"catchment","id":${d},"parent":${p === 0 ? 'null' : p},"level":${H.level[d]},"catchmentCells":${jn(C.cells[d])},"catchmentArea":${jn(C.area[d])}}`;
      fc.featureWith(d, (k) => writeOutlineGeometry(k, o, g.transform), props);
      layer?.polygons(d, outlineRings(o, g.transform), ['catchment', d, p === 0 ? null : p, H.level[d], C.cells[d], C.area[d]]);
    });
    fc.end();
    return n;
  } finally {
    sink.close();
  }
}
