/** Plain-text writers: CSV rows and GeoJSON features. No analysis here. */
import type { Crs } from '../surface/grid.js';

function csvCell(v: unknown): string {
  if (v === null || v === undefined) return '';
  if (typeof v === 'number') return Number.isFinite(v) ? String(v) : '';
  const s = String(v);
  return /[",\n\r]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}

/** CSV text with a header row; `columns` maps header → accessor. */
export function toCsv<T>(rows: readonly T[], columns: readonly [string, (r: T) => unknown][]): string {
  const lines = [columns.map(([h]) => csvCell(h)).join(',')];
  for (const r of rows) lines.push(columns.map(([, f]) => csvCell(f(r))).join(','));
  return lines.join('\n') + '\n';
}

export interface Feature {
  type: 'Feature';
  id?: number | string;
  geometry: { type: string; coordinates: unknown } | null;
  properties: Record<string, unknown>;
}

/**
 * A GeoJSON FeatureCollection in the surface's own coordinates. When the CRS has an EPSG code
 * it is named with the 2008 GeoJSON `crs` member (read by GDAL/OGR); without a CRS no member is written.
 */
export function featureCollection(features: Feature[], crs: Crs | null, extra: Record<string, unknown> = {}): string {
  return JSON.stringify({ ...collectionHead(crs, extra), features }) + '\n';
}

/** The members of featureCollection's collection before `features` (for the streamed writers). */
export function collectionHead(crs: Crs | null, extra: Record<string, unknown> = {}): Record<string, unknown> {
  const fc: Record<string, unknown> = { type: 'FeatureCollection', ...extra };
  if (crs?.epsg) fc.crs = { type: 'name', properties: { name: `urn:ogc:def:crs:EPSG::${crs.epsg}` } };
  return fc;
}

export function pointFeature(x: number, y: number, properties: Record<string, unknown>, id?: number): Feature {
  return { type: 'Feature', ...(id !== undefined ? { id } : {}), geometry: { type: 'Point', coordinates: [x, y] }, properties };
}
