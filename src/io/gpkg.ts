/**
 * GeoPackage output (OGC 12-128r18, GeoPackage 1.3; `user_version` 10300): one SQLite file
 * holding feature layers — typed attribute columns, geometries in GeoPackage binary (a "GP" header
 * with the envelope, then WKB written here from flat coordinate arrays), the CRS registered in
 * `gpkg_spatial_ref_sys`, and an R-tree spatial index per layer (the `gpkg_rtree_index`
 * extension). Rows go in through prepared statements in transactions of many rows, one feature at
 * a time: nothing feature-sized is held as JS objects.
 *
 * The R-tree's triggers call ST_* functions that plain SQLite lacks, so they are created after the
 * rows are in, and the index is filled from the envelopes computed here (what the standard's
 * "load spatial index values" statement would compute).
 */
import type Database from 'better-sqlite3';
import { createRequire } from 'node:module';
import { rmSync } from 'node:fs';
import type { Crs } from '../surface/grid.js';

/** Attribute column types (GeoPackage data types; BOOLEAN is stored as INTEGER 0/1). */
export type GpkgColumnType = 'INTEGER' | 'REAL' | 'TEXT' | 'BOOLEAN';

/** Geometry column types sill writes (a single polygon is written as a one-part MultiPolygon). */
export type GpkgGeometryType = 'POINT' | 'LINESTRING' | 'MULTILINESTRING' | 'MULTIPOLYGON';

export interface GpkgLayerSpec {
  /** Table name (the GeoJSON file's stem, e.g. 'pour-points'). */
  name: string;
  geometry: GpkgGeometryType;
  /** Attribute columns in order: name and type. */
  columns: readonly (readonly [string, GpkgColumnType])[];
  description?: string;
}

/** A row's attribute values, in the layer's column order (null for SQL NULL). */
export type GpkgValue = number | string | boolean | null;

/** The `gpkg_spatial_ref_sys` row of a CRS. */
export interface SrsRow {
  srsId: number;
  name: string;
  organization: string;
  organizationId: number;
  definition: string;
  description: string | null;
}

/**
 * better-sqlite3, loaded when the first GeoPackage is written (not when sill starts), so that a
 * machine where its native part did not build still runs every command with --no-gpkg.
 */
let sqlite: typeof Database | null = null;
/** better-sqlite3, or the one-line error saying that it did not load. */
export function loadSqlite(): typeof Database {
  if (!sqlite) {
    try {
      sqlite = createRequire(import.meta.url)('better-sqlite3') as typeof Database;
    } catch (e) {
      throw new Error(`results.gpkg needs the better-sqlite3 package, which did not load (${(e as Error).message.split('\n')[0]}); reinstall sill so that it builds, or pass --no-gpkg`);
    }
  }
  return sqlite;
}
function openDatabase(path: string): Database.Database {
  const Sqlite = loadSqlite();
  return new Sqlite(path);
}

/** Rows written between commits. */
const ROWS_PER_TRANSACTION = 20000;

/** The application id 'GPKG' and the version (Requirement 2 of the standard). */
export const GPKG_APPLICATION_ID = 0x47504b47;
export const GPKG_USER_VERSION = 10300;

const WGS84_GEOGCS = 'GEOGCS["WGS 84",DATUM["WGS_1984",SPHEROID["WGS 84",6378137,298.257223563,AUTHORITY["EPSG","7030"]],AUTHORITY["EPSG","6326"]],' +
  'PRIMEM["Greenwich",0,AUTHORITY["EPSG","8901"]],UNIT["degree",0.0174532925199433,AUTHORITY["EPSG","9122"]],AUTHORITY["EPSG","4326"]]';

/** The three rows every GeoPackage holds (Requirement 11): WGS 84, undefined Cartesian, undefined geographic. */
export const REQUIRED_SRS: readonly SrsRow[] = [
  { srsId: 4326, name: 'WGS 84 geodetic', organization: 'EPSG', organizationId: 4326, definition: WGS84_GEOGCS, description: 'longitude/latitude coordinates in decimal degrees on the WGS 84 spheroid' },
  { srsId: -1, name: 'Undefined Cartesian SRS', organization: 'NONE', organizationId: -1, definition: 'undefined', description: 'undefined Cartesian coordinate reference system' },
  { srsId: 0, name: 'Undefined geographic SRS', organization: 'NONE', organizationId: 0, definition: 'undefined', description: 'undefined geographic coordinate reference system' },
];

const geogcs = (name: string, datum: string, datumCode: number, code: number): string =>
  `GEOGCS["${name}",DATUM["${datum}",SPHEROID["GRS 1980",6378137,298.257222101,AUTHORITY["EPSG","7019"]],TOWGS84[0,0,0,0,0,0,0],AUTHORITY["EPSG","${datumCode}"]],` +
  `PRIMEM["Greenwich",0,AUTHORITY["EPSG","8901"]],UNIT["degree",0.0174532925199433,AUTHORITY["EPSG","9122"]],AUTHORITY["EPSG","${code}"]]`;
const ETRS89 = geogcs('ETRS89', 'European_Terrestrial_Reference_System_1989', 6258, 4258);
const NAD83 = geogcs('NAD83', 'North_American_Datum_1983', 6269, 4269);
const RGF93 = geogcs('RGF93 v1', 'Reseau_Geodesique_Francais_1993_v1', 6171, 4171);
const METRE = 'UNIT["metre",1,AUTHORITY["EPSG","9001"]]';
const param = (k: string, v: number): string => `PARAMETER["${k}",${v}]`;

function utm(name: string, geog: string, zone: number, south: boolean, code: number): string {
  return `PROJCS["${name}",${geog},PROJECTION["Transverse_Mercator"],${param('latitude_of_origin', 0)},${param('central_meridian', 6 * zone - 183)},` +
    `${param('scale_factor', 0.9996)},${param('false_easting', 500000)},${param('false_northing', south ? 10000000 : 0)},${METRE},` +
    `AXIS["Easting",EAST],AXIS["Northing",NORTH],AUTHORITY["EPSG","${code}"]]`;
}

/**
 * OGC WKT (version 1) of the EPSG codes whose parameters sill carries (the same set it can
 * reproject, src/hydro/reproject.ts), or null. Parameters are the EPSG dataset's, written from
 * memory and checked against GDAL's own definitions in tests/io/gpkg.test.ts.
 */
export function epsgWkt(epsg: number): string | null {
  if (epsg === 4326) return WGS84_GEOGCS;
  if (epsg >= 32601 && epsg <= 32660) return utm(`WGS 84 / UTM zone ${epsg - 32600}N`, WGS84_GEOGCS, epsg - 32600, false, epsg);
  if (epsg >= 32701 && epsg <= 32760) return utm(`WGS 84 / UTM zone ${epsg - 32700}S`, WGS84_GEOGCS, epsg - 32700, true, epsg);
  if (epsg >= 25828 && epsg <= 25838) return utm(`ETRS89 / UTM zone ${epsg - 25800}N`, ETRS89, epsg - 25800, false, epsg);
  if (epsg >= 26901 && epsg <= 26923) return utm(`NAD83 / UTM zone ${epsg - 26900}N`, NAD83, epsg - 26900, false, epsg);
  if (epsg === 3857) {
    return `PROJCS["WGS 84 / Pseudo-Mercator",${WGS84_GEOGCS},PROJECTION["Mercator_1SP"],${param('central_meridian', 0)},${param('scale_factor', 1)},` +
      `${param('false_easting', 0)},${param('false_northing', 0)},${METRE},AXIS["Easting",EAST],AXIS["Northing",NORTH],` +
      'EXTENSION["PROJ4","+proj=merc +a=6378137 +b=6378137 +lat_ts=0 +lon_0=0 +x_0=0 +y_0=0 +k=1 +units=m +nadgrids=@null +wktext +no_defs"],AUTHORITY["EPSG","3857"]]';
  }
  if (epsg === 3035) {
    return `PROJCS["ETRS89-extended / LAEA Europe",${ETRS89},PROJECTION["Lambert_Azimuthal_Equal_Area"],${param('latitude_of_center', 52)},${param('longitude_of_center', 10)},` +
      `${param('false_easting', 4321000)},${param('false_northing', 3210000)},${METRE},AXIS["Northing",NORTH],AXIS["Easting",EAST],AUTHORITY["EPSG","3035"]]`;
  }
  if (epsg === 2154) {
    return `PROJCS["RGF93 v1 / Lambert-93",${RGF93},PROJECTION["Lambert_Conformal_Conic_2SP"],${param('latitude_of_origin', 46.5)},${param('central_meridian', 3)},` +
      `${param('standard_parallel_1', 49)},${param('standard_parallel_2', 44)},${param('false_easting', 700000)},${param('false_northing', 6600000)},${METRE},` +
      'AXIS["Easting",EAST],AXIS["Northing",NORTH],AUTHORITY["EPSG","2154"]]';
  }
  return null;
}

/**
 * The `gpkg_spatial_ref_sys` row for a surface's CRS: its EPSG code as the srs_id (with the WKT
 * when sill carries the parameters; otherwise 'undefined', and readers resolve the code through
 * organization EPSG), the undefined geographic row (0) for degrees without a code, the undefined
 * Cartesian row (−1) otherwise.
 */
export function srsFor(crs: Crs | null): SrsRow {
  if (crs?.epsg !== undefined && crs.epsg > 0) {
    const req = REQUIRED_SRS.find((r) => r.srsId === crs.epsg);
    if (req) return req;
    return {
      srsId: crs.epsg, name: crs.name ?? `EPSG:${crs.epsg}`, organization: 'EPSG', organizationId: crs.epsg,
      definition: epsgWkt(crs.epsg) ?? 'undefined', description: null,
    };
  }
  return REQUIRED_SRS[crs?.geographic ? 2 : 1];
}

/** SQLite's result codes for file-system failures, as the errno codes the output folder reports in plain words. */
const ERRNO: Record<string, string> = {
  SQLITE_FULL: 'ENOSPC', SQLITE_IOERR: 'EIO', SQLITE_READONLY: 'EROFS', SQLITE_PERM: 'EPERM', SQLITE_CANTOPEN: 'EACCES', SQLITE_TOOBIG: 'EFBIG',
};

/** A SQLite error from a file-system failure as a file-system error (`code` ENOSPC, EIO …) naming the file; others unchanged. */
export function asFsError(e: unknown, path: string): unknown {
  const code = (e as { code?: unknown })?.code;
  if (typeof code !== 'string' || !code.startsWith('SQLITE_')) return e;
  const errno = ERRNO[code] ?? ERRNO[code.replace(/_[A-Z]+$/, '')];
  if (!errno) return e;
  return Object.assign(new Error(`${path}: ${(e as Error).message}`), { code: errno });
}

/** An SQL identifier in double quotes. */
const q = (name: string): string => `"${name.replace(/"/g, '""')}"`;

/** The R-tree triggers of the standard (extension gpkg_rtree_index, GeoPackage 1.3), for table t, geometry c, key i. */
function rtreeTriggers(t: string, c: string, i: string): string[] {
  const rt = q(`rtree_${t}_${c}`), tn = (s: string) => q(`rtree_${t}_${c}_${s}`);
  const T = q(t), C = q(c), I = q(i);
  const values = `VALUES (NEW.${I}, ST_MinX(NEW.${C}), ST_MaxX(NEW.${C}), ST_MinY(NEW.${C}), ST_MaxY(NEW.${C}))`;
  return [
    `CREATE TRIGGER ${tn('insert')} AFTER INSERT ON ${T} WHEN (new.${C} NOT NULL AND NOT ST_IsEmpty(NEW.${C})) BEGIN INSERT OR REPLACE INTO ${rt} ${values}; END`,
    `CREATE TRIGGER ${tn('update1')} AFTER UPDATE OF ${C} ON ${T} WHEN OLD.${I} = NEW.${I} AND (NEW.${C} NOTNULL AND NOT ST_IsEmpty(NEW.${C})) BEGIN INSERT OR REPLACE INTO ${rt} ${values}; END`,
    `CREATE TRIGGER ${tn('update2')} AFTER UPDATE OF ${C} ON ${T} WHEN OLD.${I} = NEW.${I} AND (NEW.${C} ISNULL OR ST_IsEmpty(NEW.${C})) BEGIN DELETE FROM ${rt} WHERE id = OLD.${I}; END`,
    `CREATE TRIGGER ${tn('update3')} AFTER UPDATE OF ${C} ON ${T} WHEN OLD.${I} != NEW.${I} AND (NEW.${C} NOTNULL AND NOT ST_IsEmpty(NEW.${C})) BEGIN DELETE FROM ${rt} WHERE id = OLD.${I}; INSERT OR REPLACE INTO ${rt} ${values}; END`,
    `CREATE TRIGGER ${tn('update4')} AFTER UPDATE ON ${T} WHEN OLD.${I} != NEW.${I} AND (NEW.${C} ISNULL OR ST_IsEmpty(NEW.${C})) BEGIN DELETE FROM ${rt} WHERE id IN (OLD.${I}, NEW.${I}); END`,
    `CREATE TRIGGER ${tn('delete')} AFTER DELETE ON ${T} WHEN old.${C} NOT NULL BEGIN DELETE FROM ${rt} WHERE id = OLD.${I}; END`,
  ];
}

const FID = 'fid';
const GEOM = 'geom';

/** What the feature writers need of a GeoPackage being written: a layer to put rows into. */
export interface GpkgLayers {
  layer(spec: GpkgLayerSpec): GpkgLayer;
}

/** Where a layer's rows go: SQLite on this thread, or a batch for the writing thread (gpkg-thread.ts). */
export interface GpkgRowOut {
  /** One row: `blob` the geometry (null: none), `indexed` whether its envelope goes into the R-tree. */
  put(fid: number, blob: Uint8Array | null, values: readonly GpkgValue[], x0: number, y0: number, x1: number, y1: number, indexed: boolean): void;
}

/** A value as it is bound: booleans as 1/0, non-finite numbers as NULL. */
export function bindValue(v: GpkgValue): number | string | null {
  return typeof v === 'boolean' ? (v ? 1 : 0) : typeof v === 'number' && !Number.isFinite(v) ? null : v;
}

/**
 * A GeoPackage being written: `layer()` opens a feature table, rows go in one at a time,
 * `finish()` writes the extents, the indexes' triggers and closes the file; `abort()` closes and
 * deletes it. Layers may be written interleaved (one transaction spans them).
 */
export class GeoPackageWriter implements GpkgLayers {
  private readonly db: Database.Database;
  private readonly layers: GpkgLayer[] = [];
  private pending = 0;
  private closed = false;
  /** The srs row the layers use. */
  readonly srs: SrsRow;

  /** The contents' last_change. */
  private readonly lastChange: string;

  /**
   * `lastChange`: the time written as the layers' `last_change` (default: now). The commands pass
   * the input's modification time, so that the same input and options give the same bytes.
   */
  constructor(readonly path: string, crs: Crs | null, opts: { lastChange?: Date } = {}) {
    this.lastChange = (opts.lastChange ?? new Date()).toISOString();
    rmSync(path, { force: true });
    this.db = openDatabase(path);
    this.srs = srsFor(crs);
    try {
      const db = this.db;
      // the file is written once into a staging folder (src/io/outdir.ts): no rollback journal on disk
      db.pragma('journal_mode = MEMORY');
      db.pragma('synchronous = OFF');
      db.pragma(`application_id = ${GPKG_APPLICATION_ID}`);
      db.pragma(`user_version = ${GPKG_USER_VERSION}`);
      db.exec(`CREATE TABLE gpkg_spatial_ref_sys (
  srs_name TEXT NOT NULL,
  srs_id INTEGER NOT NULL PRIMARY KEY,
  organization TEXT NOT NULL,
  organization_coordsys_id INTEGER NOT NULL,
  definition  TEXT NOT NULL,
  description TEXT
);
CREATE TABLE gpkg_contents (
  table_name TEXT NOT NULL PRIMARY KEY,
  data_type TEXT NOT NULL,
  identifier TEXT UNIQUE,
  description TEXT DEFAULT '',
  last_change DATETIME NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now')),
  min_x DOUBLE,
  min_y DOUBLE,
  max_x DOUBLE,
  max_y DOUBLE,
  srs_id INTEGER,
  CONSTRAINT fk_gc_r_srs_id FOREIGN KEY (srs_id) REFERENCES gpkg_spatial_ref_sys(srs_id)
);
CREATE TABLE gpkg_geometry_columns (
  table_name TEXT NOT NULL,
  column_name TEXT NOT NULL,
  geometry_type_name TEXT NOT NULL,
  srs_id INTEGER NOT NULL,
  z TINYINT NOT NULL,
  m TINYINT NOT NULL,
  CONSTRAINT pk_geom_cols PRIMARY KEY (table_name, column_name),
  CONSTRAINT uk_gc_table_name UNIQUE (table_name),
  CONSTRAINT fk_gc_tn FOREIGN KEY (table_name) REFERENCES gpkg_contents(table_name),
  CONSTRAINT fk_gc_srs FOREIGN KEY (srs_id) REFERENCES gpkg_spatial_ref_sys (srs_id)
);
CREATE TABLE gpkg_extensions (
  table_name TEXT,
  column_name TEXT,
  extension_name TEXT NOT NULL,
  definition TEXT NOT NULL,
  scope TEXT NOT NULL,
  CONSTRAINT ge_tce UNIQUE (table_name, column_name, extension_name)
);`);
      const srs = db.prepare('INSERT INTO gpkg_spatial_ref_sys (srs_name, srs_id, organization, organization_coordsys_id, definition, description) VALUES (?, ?, ?, ?, ?, ?)');
      const rows = REQUIRED_SRS.some((r) => r.srsId === this.srs.srsId) ? REQUIRED_SRS : [...REQUIRED_SRS, this.srs];
      for (const r of rows) srs.run(r.name, r.srsId, r.organization, r.organizationId, r.definition, r.description);
      db.exec('BEGIN');
    } catch (e) {
      this.abort();
      throw asFsError(e, path);
    }
  }

  /** Open a feature layer (its table, its geometry column, its R-tree). */
  layer(spec: GpkgLayerSpec): GpkgLayer {
    try {
      return this.createLayer(spec);
    } catch (e) {
      throw asFsError(e, this.path);
    }
  }

  private createLayer(spec: GpkgLayerSpec): GpkgLayer {
    const db = this.db;
    const t = spec.name;
    const cols = spec.columns.map(([n, type]) => `${q(n)} ${type}`).join(', ');
    db.exec(`CREATE TABLE ${q(t)} (${q(FID)} INTEGER PRIMARY KEY AUTOINCREMENT NOT NULL, ${q(GEOM)} ${spec.geometry}${cols ? ', ' + cols : ''})`);
    db.prepare("INSERT INTO gpkg_contents (table_name, data_type, identifier, description, last_change, srs_id) VALUES (?, 'features', ?, ?, ?, ?)").run(t, t, spec.description ?? '', this.lastChange, this.srs.srsId);
    db.prepare('INSERT INTO gpkg_geometry_columns (table_name, column_name, geometry_type_name, srs_id, z, m) VALUES (?, ?, ?, ?, 0, 0)').run(t, GEOM, spec.geometry, this.srs.srsId);
    db.prepare("INSERT INTO gpkg_extensions (table_name, column_name, extension_name, definition, scope) VALUES (?, ?, 'gpkg_rtree_index', 'http://www.geopackage.org/spec120/#extension_rtree', 'write-only')").run(t, GEOM);
    db.exec(`CREATE VIRTUAL TABLE ${q(`rtree_${t}_${GEOM}`)} USING rtree(id, minx, maxx, miny, maxy)`);
    const marks = spec.columns.map(() => ', ?').join('');
    const names = spec.columns.map(([n]) => ', ' + q(n)).join('');
    const insert = db.prepare(`INSERT INTO ${q(t)} (${q(FID)}, ${q(GEOM)}${names}) VALUES (?, ?${marks})`);
    const index = db.prepare(`INSERT INTO ${q(`rtree_${t}_${GEOM}`)} VALUES (?, ?, ?, ?, ?)`);
    const layer = new GpkgLayer(spec, this.srs.srsId, new DirectRows(this, spec, insert, index));
    this.layers.push(layer);
    return layer;
  }

  /** Count one row; commit every ROWS_PER_TRANSACTION rows. */
  tick(): void {
    if (++this.pending >= ROWS_PER_TRANSACTION) {
      try {
        this.db.exec('COMMIT; BEGIN');
      } catch (e) {
        throw asFsError(e, this.path);
      }
      this.pending = 0;
    }
  }

  /** Write each layer's extent, create the R-tree triggers, commit and close. */
  finish(): void {
    const db = this.db;
    try {
      const extent = db.prepare('UPDATE gpkg_contents SET min_x = ?, min_y = ?, max_x = ?, max_y = ? WHERE table_name = ?');
      for (const l of this.layers) {
        const e = l.extent;
        if (e[0] <= e[2]) extent.run(e[0], e[1], e[2], e[3], l.spec.name);
        for (const sql of rtreeTriggers(l.spec.name, GEOM, FID)) db.exec(sql);
      }
      db.exec('COMMIT');
      db.close();
      this.closed = true;
    } catch (e) {
      this.abort();
      throw asFsError(e, this.path);
    }
  }

  /** Close without finishing and delete the file. */
  abort(): void {
    if (!this.closed) {
      this.closed = true;
      try { this.db.close(); } catch { /* already failed */ }
    }
    rmSync(this.path, { force: true });
  }
}

/** Rows into SQLite on this thread: the layer table's INSERT and the R-tree's, one transaction per ROWS_PER_TRANSACTION rows. */
class DirectRows implements GpkgRowOut {
  private readonly args: unknown[];
  constructor(private readonly gp: GeoPackageWriter, spec: GpkgLayerSpec, private readonly insert: Database.Statement, private readonly index: Database.Statement) {
    this.args = new Array(2 + spec.columns.length);
  }

  put(fid: number, blob: Uint8Array | null, values: readonly GpkgValue[], x0: number, y0: number, x1: number, y1: number, indexed: boolean): void {
    const a = this.args;
    a[0] = fid;
    a[1] = blob === null ? null : Buffer.from(blob.buffer, blob.byteOffset, blob.byteLength);
    for (let k = 0; k < values.length; k++) a[k + 2] = bindValue(values[k]);
    try {
      this.insert.run(a);
      if (indexed) this.index.run(fid, x0, x1, y0, y1);
    } catch (e) {
      throw asFsError(e, this.gp.path);
    }
    this.gp.tick();
  }
}

/** One feature table being written. */
export class GpkgLayer {
  /** [minx, miny, maxx, maxy] over the rows written (empty: min > max). */
  readonly extent = [Infinity, Infinity, -Infinity, -Infinity];
  private buf = new ArrayBuffer(1 << 16);
  private view = new DataView(this.buf);
  private bytes = new Uint8Array(this.buf);
  private pos = 0;
  /** Rows written. */
  count = 0;

  constructor(readonly spec: GpkgLayerSpec, private readonly srsId: number, private readonly out: GpkgRowOut) {}

  /** A point feature. */
  point(fid: number, x: number, y: number, values: readonly GpkgValue[]): void {
    this.begin(29, false, false);
    this.wkbHead(1, 0);
    this.f64(x);
    this.f64(y);
    this.row(fid, values, x, y, x, y);
  }

  /** A line feature from flat coordinates (null: no geometry). */
  line(fid: number, xy: ArrayLike<number> | null, values: readonly GpkgValue[]): void {
    if (xy === null) { this.row(fid, values, NaN, NaN, NaN, NaN, true); return; }
    const n = xy.length >> 1;
    const [x0, y0, x1, y1] = bounds([xy]);
    this.begin(9 + 16 * n, n > 0, n === 0);
    this.wkbHead(2, n);
    for (let k = 0; k < 2 * n; k++) this.f64(xy[k]);
    this.row(fid, values, x0, y0, x1, y1, false, n === 0);
  }

  /**
   * A multi-line feature: the vertices of all parts flat in `xy` (x0, y0, x1, y1, …), part k from
   * vertex `partStart[k]` to the next part's start (the last to `vertices`). No parts: an empty
   * MultiLineString.
   */
  lines(fid: number, xy: ArrayLike<number>, partStart: ArrayLike<number>, parts: number, vertices: number, values: readonly GpkgValue[]): void {
    const empty = parts === 0;
    const [x0, y0, x1, y1] = empty ? [NaN, NaN, NaN, NaN] : bounds([Array.prototype.slice.call(xy, 0, 2 * vertices) as number[]]);
    this.begin(9 + 9 * parts + 16 * vertices, !empty, empty);
    this.wkbHead(5, parts);
    for (let k = 0; k < parts; k++) {
      const a = partStart[k], b = k + 1 < parts ? partStart[k + 1] : vertices;
      this.wkbHead(2, b - a);
      for (let v = 2 * a; v < 2 * b; v++) this.f64(xy[v]);
    }
    this.row(fid, values, x0, y0, x1, y1, false, empty);
  }

  /**
   * A (multi)polygon feature: polygons as lists of rings, each ring flat x0, y0, x1, y1, … (the
   * GeoJSON writers' input); written as a MultiPolygon. null: no geometry; []: an empty MultiPolygon.
   */
  polygons(fid: number, polygons: readonly (readonly ArrayLike<number>[])[] | null, values: readonly GpkgValue[]): void {
    if (polygons === null) { this.row(fid, values, NaN, NaN, NaN, NaN, true); return; }
    let size = 9;
    for (const p of polygons) { size += 9; for (const r of p) size += 4 + 16 * (r.length >> 1); }
    const empty = polygons.length === 0;
    const [x0, y0, x1, y1] = empty ? [NaN, NaN, NaN, NaN] : bounds(polygons.flat());
    this.begin(size, !empty, empty);
    this.wkbHead(6, polygons.length);
    for (const p of polygons) {
      this.wkbHead(3, p.length);
      for (const r of p) {
        const n = r.length >> 1;
        this.u32(n);
        for (let k = 0; k < 2 * n; k++) this.f64(r[k]);
      }
    }
    this.row(fid, values, x0, y0, x1, y1, false, empty);
  }

  /** Start a geometry blob of `wkb` bytes: the GeoPackage binary header (with an XY envelope when `envelope`). */
  private begin(wkb: number, envelope: boolean, empty: boolean): void {
    const size = 8 + (envelope ? 32 : 0) + wkb;
    if (size > this.buf.byteLength) {
      this.buf = new ArrayBuffer(Math.max(size, 2 * this.buf.byteLength));
      this.view = new DataView(this.buf);
      this.bytes = new Uint8Array(this.buf);
    }
    const b = this.bytes;
    b[0] = 0x47; b[1] = 0x50; // 'GP'
    b[2] = 0; // version 1
    // flags: little-endian (bit 0), envelope [minx, maxx, miny, maxy] (bits 1–3 = 1), empty (bit 4)
    b[3] = 1 | (envelope ? 2 : 0) | (empty ? 16 : 0);
    this.view.setInt32(4, this.srsId, true);
    this.pos = 8;
    if (envelope) this.pos += 32; // filled in row()
    this.envelope = envelope;
  }
  private envelope = false;

  private wkbHead(type: number, count: number): void {
    this.bytes[this.pos++] = 1; // little-endian
    this.u32(type);
    if (type !== 1) this.u32(count);
  }
  private u32(v: number): void { this.view.setUint32(this.pos, v, true); this.pos += 4; }
  private f64(v: number): void { this.view.setFloat64(this.pos, v, true); this.pos += 8; }

  private row(fid: number, values: readonly GpkgValue[], x0: number, y0: number, x1: number, y1: number, none = false, empty = false): void {
    let blob: Uint8Array | null = null;
    if (!none) {
      if (this.envelope) {
        const v = this.view;
        v.setFloat64(8, x0, true); v.setFloat64(16, x1, true); v.setFloat64(24, y0, true); v.setFloat64(32, y1, true);
      }
      blob = this.bytes.subarray(0, this.pos);
    }
    this.raw(fid, blob, values, x0, y0, x1, y1, !none && !empty);
  }

  /**
   * A row whose geometry blob is already made (the writing thread's side of gpkg-thread.ts):
   * `indexed` puts its envelope into the R-tree and the layer's extent.
   */
  raw(fid: number, blob: Uint8Array | null, values: readonly GpkgValue[], x0: number, y0: number, x1: number, y1: number, indexed: boolean): void {
    this.out.put(fid, blob, values, x0, y0, x1, y1, indexed);
    if (indexed) {
      const e = this.extent;
      if (x0 < e[0]) e[0] = x0;
      if (y0 < e[1]) e[1] = y0;
      if (x1 > e[2]) e[2] = x1;
      if (y1 > e[3]) e[3] = y1;
    }
    this.count++;
  }
}

/** [minx, miny, maxx, maxy] of flat coordinate arrays. */
function bounds(rings: readonly ArrayLike<number>[]): [number, number, number, number] {
  let x0 = Infinity, y0 = Infinity, x1 = -Infinity, y1 = -Infinity;
  for (const r of rings) {
    for (let k = 0; k + 1 < r.length; k += 2) {
      const x = r[k], y = r[k + 1];
      if (x < x0) x0 = x;
      if (x > x1) x1 = x;
      if (y < y0) y0 = y;
      if (y > y1) y1 = y;
    }
  }
  return [x0, y0, x1, y1];
}
