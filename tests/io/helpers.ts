/** Shared helpers for the io tests: fixture paths, GDAL's recorded readings, temp folders. */
import { runs } from '../prereq.js';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';

export const FIXTURES = fileURLToPath(new URL('../../fixtures/io/', import.meta.url));

export function fixture(name: string): string {
  return join(FIXTURES, name);
}

/** A cell value as recorded in expected.json: null where GDAL's mask says nodata (or the value is NaN). */
export type RecordedValue = number | null | 'Infinity' | '-Infinity';

export interface GdalBand {
  dataType: string;
  pixelType: string | null;
  nbits: number | null;
  blockSize: [number, number];
  nodata: number | 'nan' | 'Infinity' | '-Infinity' | null;
  values: RecordedValue[];
}

export interface GdalReading {
  width: number;
  height: number;
  geotransform: [number, number, number, number, number, number];
  epsg: number | null;
  geographic: boolean | null;
  areaOrPoint: string | null;
  compression: string | null;
  interleave: string | null;
  bands: GdalBand[];
}

export interface Expected {
  gdalVersion: string;
  numpyVersion: string;
  files: Record<string, GdalReading>;
  unsupported: Record<string, { dataType?: string; nbits?: number }>;
  npy: Record<string, { shape: [number, number]; dtype: string; fortran: boolean; values: RecordedValue[] }>;
}

export const expected: Expected = JSON.parse(readFileSync(fixture('expected.json'), 'utf8'));

/** The value sill should hold for a recorded cell: NaN for nodata. */
export function sillValue(v: RecordedValue): number {
  if (v === null) return NaN;
  if (v === 'Infinity') return Infinity;
  if (v === '-Infinity') return -Infinity;
  return v;
}

export function recordedNodata(v: GdalBand['nodata']): number | null {
  if (v === null) return null;
  if (v === 'nan') return NaN;
  if (v === 'Infinity') return Infinity;
  if (v === '-Infinity') return -Infinity;
  return v;
}

/** Indices where two arrays differ (NaN equals NaN); empty when they agree. */
export function mismatches(got: ArrayLike<number>, want: ArrayLike<number>): number[] {
  const bad: number[] = [];
  if (got.length !== want.length) return [-1];
  for (let i = 0; i < want.length; i++) {
    const a = got[i];
    const b = want[i];
    if (!(a === b || (a !== a && b !== b))) bad.push(i);
  }
  return bad;
}

export function tempDir(): { dir: string; cleanup: () => void } {
  const dir = mkdtempSync(join(tmpdir(), 'sill-io-'));
  return { dir, cleanup: () => rmSync(dir, { recursive: true, force: true }) };
}

/** Debian's Python with GDAL bindings, when installed. */
export { PYTHON } from '../prereq.js';
export const hasGdal = runs('gdal');
