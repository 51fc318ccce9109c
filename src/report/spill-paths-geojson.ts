/**
 * spill-paths.geojson: one MultiLineString per depression, from its pour point down to where its
 * overflow arrives (src/hydro/spill-paths.ts, docs/ponds.md "Spill paths"), made and written one at a
 * time, so memory holds one path, never all of them.
 */
import type { PondsResult } from '../hydro/ponds.js';
import { SpillPaths, type SpillPath } from '../hydro/spill-paths.js';
import { collectionHead } from '../io/tables.js';
import { TextSink, FeatureCollectionWriter, formatNumber as jn } from '../io/stream.js';
import type { GpkgLayers, GpkgLayerSpec } from '../io/gpkg.js';

/** The spill-paths layer of results.gpkg: the features of spill-paths.geojson (`to`: NULL for the outside; `arrives`: the GeoJSON value as text — a depression id, "outside" or "pit"). */
export const SPILL_PATHS_LAYER: GpkgLayerSpec = {
  name: 'spill-paths',
  geometry: 'MULTILINESTRING',
  description: 'where each full depression overflows: from its pour point down to the depression or the map edge its water reaches (the features of spill-paths.geojson)',
  columns: [['from', 'INTEGER'], ['to', 'INTEGER'], ['arrives', 'TEXT'], ['length', 'REAL'], ['drop', 'REAL'], ['vertices', 'INTEGER']],
};

/** Where a spill path's water arrives, as a property value. */
function arrivesJson(p: SpillPath): string {
  return p.arrives.kind === 'depression' ? String(p.arrives.id) : p.arrives.kind === 'outside' ? '"outside"' : '"pit"';
}

/** Write spill-paths.geojson at `path` (and, with `gpkg`, the same features as its layer `spill-paths`); `catchments` is the catchment of every cell (`result.catchments.labels`). */
export function writeSpillPathsGeojson(path: string, result: PondsResult, catchments: Int32Array, meta: { units: unknown; caution: string }, gpkg: GpkgLayers | null = null): void {
  const g = result.grid, H = result.hierarchy;
  const maker = new SpillPaths(g, result.complex, H, catchments, result.options.connectivity, result.options.nodataOutlet, !result.areas.uniform, result.catchments?.resume ?? null);
  const sink = TextSink.file(path);
  try {
    const fc = new FeatureCollectionWriter(sink, collectionHead(g.crs, {
      name: 'spill-paths',
      description: 'where each full depression overflows: from its pour point down to the depression or the map edge its water reaches',
      units: meta.units, caution: meta.caution,
    }));
    const layer = gpkg ? gpkg.layer(SPILL_PATHS_LAYER) : null;
    for (let d = 1; d <= H.count; d++) {
      const p = maker.path(d);
      layer?.lines(d, p.xy, p.partStart, p.parts, p.vertices, [d, H.into[d] === 0 ? null : H.into[d], p.arrives.kind === 'depression' ? String(p.arrives.id) : p.arrives.kind, p.length, p.drop, p.vertices]);
      const into = H.into[d];
      const props = `{"from":${d},"to":${into === 0 ? '"outside"' : into},"arrives":${arrivesJson(p)},"length":${jn(p.length)},"drop":${jn(p.drop)},"vertices":${p.vertices}}`;
      fc.featureWith(d, (k) => {
        k.write('{"type":"MultiLineString","coordinates":[');
        for (let part = 0; part < p.parts; part++) {
          const end = part + 1 < p.parts ? p.partStart[part + 1] : p.vertices;
          let t = part > 0 ? ',[' : '[';
          for (let v = p.partStart[part]; v < end; v++) t += `${v > p.partStart[part] ? ',' : ''}[${jn(p.xy[2 * v])},${jn(p.xy[2 * v + 1])}]`;
          k.write(t + ']');
        }
        k.write(']}');
      }, props);
    }
    fc.end();
  } finally {
    sink.close();
  }
}
