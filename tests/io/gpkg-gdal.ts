/**
 * Reading a GeoPackage from outside sill: GDAL (python3-gdal's OGR, and `ogr2ogr`) for what a GIS
 * sees, and Debian's Python sqlite3 module (the system SQLite, not the one bundled with
 * better-sqlite3) for the rules of OGC 12-128r18 that SQL can check.
 * GDAL 3.6 has no `ogrinfo -json` (it came in 3.7): the layer summary is read through the same
 * OGR library with its Python bindings.
 */
import { spawnSync } from 'node:child_process';
import { PYTHON } from '../prereq.js';

export interface GdalLayer {
  name: string;
  features: number;
  /** OGR's name of the layer's geometry type ('Point', 'Multi Polygon', 'Line String'). */
  geometryType: string;
  epsg: number | null;
  /** The SRS as OGR reports it (null for the undefined rows). */
  srsWkt: string | null;
  /** [minx, maxx, miny, maxy] as OGR's GetExtent, or null for a layer without geometries. */
  extent: [number, number, number, number] | null;
  fields: Record<string, string>;
  /** Features with a non-null, non-empty geometry. */
  withGeometry: number;
}

export interface SqlReading {
  integrity: string;
  foreignKeys: number;
  applicationId: number;
  userVersion: number;
  header: string;
  tables: string[];
  srs: { srs_id: number; srs_name: string; organization: string; organization_coordsys_id: number; definition: string }[];
  contents: { table_name: string; data_type: string; identifier: string; min_x: number | null; min_y: number | null; max_x: number | null; max_y: number | null; srs_id: number }[];
  geometryColumns: { table_name: string; column_name: string; geometry_type_name: string; srs_id: number; z: number; m: number }[];
  extensions: { table_name: string; column_name: string; extension_name: string; scope: string }[];
  rtree: Record<string, number>;
  triggers: Record<string, string[]>;
  /** Per layer: the count of rows whose R-tree box contains the geometry's own envelope (from the GeoPackage header). */
  rtreeCovers: Record<string, number>;
}

export interface GpkgReading { layers: GdalLayer[]; sql: SqlReading }

const SCRIPT = String.raw`
import json, sqlite3, struct, sys
from osgeo import ogr, osr
ogr.UseExceptions()
path = sys.argv[1]
ds = ogr.Open(path)
layers = []
for i in range(ds.GetLayerCount()):
    l = ds.GetLayer(i)
    srs = l.GetSpatialRef()
    epsg = None
    if srs is not None:
        code = srs.GetAuthorityCode(None)
        epsg = int(code) if code else None
    d = l.GetLayerDefn()
    fields = {d.GetFieldDefn(k).GetName(): ogr.GetFieldTypeName(d.GetFieldDefn(k).GetType()) + ('(' + ogr.GetFieldSubTypeName(d.GetFieldDefn(k).GetSubType()) + ')' if d.GetFieldDefn(k).GetSubType() else '') for k in range(d.GetFieldCount())}
    n = 0
    for f in l:
        g = f.GetGeometryRef()
        if g is not None and not g.IsEmpty():
            n += 1
    try:
        ext = list(l.GetExtent())
    except Exception:
        ext = None
    layers.append({'name': l.GetName(), 'features': l.GetFeatureCount(), 'geometryType': ogr.GeometryTypeToName(l.GetGeomType()),
                   'epsg': epsg, 'srsWkt': srs.ExportToWkt() if srs is not None else None, 'extent': ext, 'fields': fields, 'withGeometry': n})
ds = None
c = sqlite3.connect(path)
c.row_factory = sqlite3.Row
q = lambda s: [dict(r) for r in c.execute(s)]
with open(path, 'rb') as fh:
    head = fh.read(100)
out = {
  'integrity': c.execute('PRAGMA integrity_check').fetchone()[0],
  'foreignKeys': len(c.execute('PRAGMA foreign_key_check').fetchall()),
  'applicationId': c.execute('PRAGMA application_id').fetchone()[0],
  'userVersion': c.execute('PRAGMA user_version').fetchone()[0],
  'header': head[:16].decode('ascii', 'replace'),
  'tables': sorted(r['name'] for r in q("SELECT name FROM sqlite_master WHERE type IN ('table', 'view')")),
  'srs': q('SELECT srs_id, srs_name, organization, organization_coordsys_id, definition FROM gpkg_spatial_ref_sys ORDER BY srs_id'),
  'contents': q('SELECT table_name, data_type, identifier, min_x, min_y, max_x, max_y, srs_id FROM gpkg_contents ORDER BY table_name'),
  'geometryColumns': q('SELECT * FROM gpkg_geometry_columns ORDER BY table_name'),
  'extensions': q('SELECT table_name, column_name, extension_name, scope FROM gpkg_extensions ORDER BY table_name'),
  'rtree': {}, 'triggers': {}, 'rtreeCovers': {},
}
for g in out['geometryColumns']:
    t, col = g['table_name'], g['column_name']
    rt = 'rtree_%s_%s' % (t, col)
    out['rtree'][t] = c.execute('SELECT count(*) FROM "%s"' % rt).fetchone()[0]
    out['triggers'][t] = sorted(r['name'] for r in q("SELECT name FROM sqlite_master WHERE type = 'trigger' AND tbl_name = '%s'" % t))
    # each indexed row's box holds the envelope in its geometry's GeoPackage header (float32 boxes round outwards)
    covers = 0
    for fid, blob, minx, maxx, miny, maxy in c.execute('SELECT t.fid, t."%s", r.minx, r.maxx, r.miny, r.maxy FROM "%s" t JOIN "%s" r ON r.id = t.fid' % (col, t, rt)):
        b = bytes(blob)
        flags = b[3]
        env = (flags >> 1) & 7
        if env == 0:
            (typ,) = struct.unpack('<I', b[9:13])
            x, y = struct.unpack('<dd', b[13:29])
            e = (x, x, y, y)
        else:
            e = struct.unpack('<dddd', b[8:40])
        if minx <= e[0] and maxx >= e[1] and miny <= e[2] and maxy >= e[3]:
            covers += 1
    out['rtreeCovers'][t] = covers
print(json.dumps({'layers': layers, 'sql': out}))
`;

/** Read `path` with GDAL's OGR and Python's sqlite3. */
export function readGpkg(path: string): GpkgReading {
  const r = spawnSync(PYTHON, ['-c', SCRIPT, path], { encoding: 'utf8', maxBuffer: 1 << 28 });
  if (r.status !== 0) throw new Error(`reading ${path} with GDAL failed: ${r.stderr}`);
  return JSON.parse(r.stdout) as GpkgReading;
}

export interface GeoJsonFeature {
  type: 'Feature';
  id?: number;
  geometry: { type: string; coordinates: unknown } | null;
  properties: Record<string, unknown>;
}

/** One layer converted by `ogr2ogr -f GeoJSON` (GDAL's own writer; 17 significant figures, so every double reads back exactly), its features in fid order. */
export function ogr2ogrLayer(path: string, layer: string): GeoJsonFeature[] {
  const r = spawnSync('ogr2ogr', ['-f', 'GeoJSON', '-preserve_fid', '-lco', 'WRITE_NON_FINITE_VALUES=NO', '-lco', 'SIGNIFICANT_FIGURES=17', '/vsistdout/', path, layer], { encoding: 'utf8', maxBuffer: 1 << 28 });
  if (r.status !== 0) throw new Error(`ogr2ogr ${path} ${layer} failed: ${r.stderr}`);
  return (JSON.parse(r.stdout) as { features: GeoJsonFeature[] }).features;
}

/** A GeoJSON geometry as a MultiPolygon's (sill's layers hold one-part MultiPolygons where its GeoJSON has a Polygon). */
export function asMultiPolygon(g: GeoJsonFeature['geometry']): GeoJsonFeature['geometry'] {
  if (g && g.type === 'Polygon') return { type: 'MultiPolygon', coordinates: [g.coordinates] };
  return g;
}
