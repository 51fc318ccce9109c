/**
 * Writers a library user needs, streamed from the runs' columns like the command line's files:
 * the report as JSON, depressions as GeoJSON and CSV, any records as CSV, and the rasters of a run
 * ready for `writeGeoTiff`. Each writes one file at the path given (created or truncated).
 */
import { withFileSink, writeJson, writeCsv, writePointCollection } from '../io/stream.js';
import { collectionHead } from '../io/tables.js';
import type { RasterToWrite } from '../io/geotiff-write.js';
import type { Crs, Grid } from '../surface/grid.js';
import type { PondsRun } from '../report/ponds.js';
import type { RunoffRun } from '../report/runoff.js';
import { pondsCsvColumns, pondsCsvRow } from '../report/ponds.js';
import { topLabels } from '../hydro/rasters.js';
import { writeDepressionsGeojson, writePourPointsGeojson, depressionsDescription, POUR_POINTS_DESCRIPTION } from '../report/depressions-geojson.js';
import type { OutlineLevels } from '../hydro/vectors.js';

/**
 * `value` (a report, or anything JSON.stringify takes) as JSON at `path`, written piece by piece:
 * lazy lists are streamed from their columns, never held whole. `indent` as in JSON.stringify;
 * the command line's report.json uses 1. Numbers are written exactly (shortest round trip).
 */
export function writeJsonFile(path: string, value: unknown, indent = 1): void {
  withFileSink(path, (sink) => {
    writeJson(sink, value, indent);
    sink.write('\n');
  });
}

/**
 * Records as CSV at `path`: a header of the column names, then one row per record, each cell
 * from its accessor (numbers exactly, text quoted when it must be). `rows` is an array or a lazy
 * list of a report (`report.depressions`, `report.pairs` …), read one record at a time.
 */
export function writeCsvFile<T>(path: string, rows: { length: number; at(i: number): T | undefined }, columns: readonly (readonly [string, (r: T) => unknown])[]): void {
  withFileSink(path, (sink) => writeCsv(sink, rows.length, columns.map(([h, f]) => [h, (i: number) => f(rows.at(i) as T)] as const)));
}

export interface PointsGeoJsonOptions<T> {
  /** The CRS of the coordinates, named in the collection as GDAL reads it (an EPSG code). Default none. */
  crs?: Crs | null;
  /** The collection's `name` (a GIS shows it as the layer's name). Default 'points'. */
  name?: string;
  /** The properties of a record's feature. Default: the record's members other than x and y. */
  properties?: (r: T) => Record<string, unknown>;
}

/**
 * Records with map coordinates `x`, `y` as a GeoJSON FeatureCollection of points at `path`, one
 * record at a time — e.g. `report.criticalPoints` of a survey (with `crs: surface.crs`) or the
 * minima of a barriers report. Feature ids are the records' positions.
 */
export function writePointsGeoJson<T extends { x: number; y: number }>(path: string, rows: { length: number; at(i: number): T | undefined }, options: PointsGeoJsonOptions<T> = {}): void {
  const props = options.properties ?? ((r: T) => { const { x: _x, y: _y, ...rest } = r; return rest; });
  // the record of the feature being written, made once for its coordinates and properties
  let atI = -1, atR: T | undefined;
  const at = (i: number): T => (i === atI ? atR! : (atI = i, atR = rows.at(i)!));
  withFileSink(path, (sink) => {
    writePointCollection(sink, collectionHead(options.crs ?? null, { name: options.name ?? 'points' }), rows.length, (i) => at(i).x, (i) => at(i).y, (i) => props(at(i)));
    sink.write('\n');
  });
}

/** depressions.csv of `sill ponds`, from the run's columns (units in the headers). */
export function writeDepressionsCsv(path: string, run: PondsRun): void {
  const { result, report } = run;
  const cols = report.depressions.columns;
  const columns = pondsCsvColumns(result, cols, result.areas.units.tokens);
  withFileSink(path, (sink) => {
    writeCsv(sink, 0, columns);
    for (let id = 1; id <= report.depressions.length; id++) sink.write(pondsCsvRow(result, cols, id));
  });
}

/**
 * depressions.geojson of `sill ponds`: one Polygon or MultiPolygon per depression of the chosen
 * levels at its spill level (`levels`: 'top', the default as on the command line, 'leaf' or
 * 'all'), valid Simple Features polygons along cell edges; the CRS of the grid. Returns how many
 * depressions were outlined.
 */
export function writeDepressionsGeoJson(path: string, run: PondsRun, levels: OutlineLevels = 'top'): number {
  const { result, report } = run;
  const meta = { name: 'depressions', description: depressionsDescription(levels), units: report.units, caution: report.caution };
  return writeDepressionsGeojson(path, null, result, report.depressions.columns, levels, null, meta);
}

/** pour-points.geojson of `sill ponds`: one point per depression, where it spills (the pass cell's centre). */
export function writePourPointsGeoJson(path: string, run: PondsRun): void {
  const { result, report } = run;
  writePourPointsGeojson(path, null, result, report.depressions.columns, null, { name: 'pour-points', description: POUR_POINTS_DESCRIPTION, units: report.units, caution: report.caution });
}

function raster(g: Grid, values: RasterToWrite['values'], nodata: number): RasterToWrite {
  return { width: g.width, height: g.height, transform: g.transform, crs: g.crs, values, nodata };
}

/**
 * The rasters of a `ponds` run as `sill ponds -o` writes them (pass each to `writeGeoTiff`):
 * `filled` (the DEM with depressions filled to their spill levels; the DEM's nodata), `depth`
 * (filled − DEM; nodata −9999) and `labels` (depression id per cell, 0 outside any, by the run's
 * labelLevel; nodata −1).
 */
export function pondsRasters(run: PondsRun): { filled: RasterToWrite; depth: RasterToWrite; labels: RasterToWrite } {
  const g = run.result.grid, R = run.result.rasters;
  const valueNodata = g.nodata !== null && Number.isFinite(g.nodata) ? g.nodata : NaN;
  const labels = run.report.labelLevel === 'top' ? topLabels(R.labels, run.result.hierarchy) : R.labels;
  return { filled: raster(g, R.filled, valueNodata), depth: raster(g, R.depth, -9999), labels: raster(g, labels, -1) };
}

/** The rasters of a `runoff` run as `sill runoff -o` writes them: `level` (water surface) and `depth` (water depth), nodata −9999. */
export function runoffRasters(run: RunoffRun): { level: RasterToWrite; depth: RasterToWrite } {
  const g = run.result.grid, R = run.result.rasters;
  return { level: raster(g, R.level, -9999), depth: raster(g, R.depth, -9999) };
}
