/** A small mosaic of four abutting GeoTIFF tiles for the staged ponds runs, and a way to damage one tile's cells and restore it (same size and time). */
import { copyFileSync, mkdirSync, readFileSync, statSync, utimesSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { expect } from 'vitest';
import { listFiles } from '../cli/run.js';
import { writeGeoTiff } from '../../src/io/geotiff-write.js';

export const TILE_NAMES = ['a', 'b', 'c', 'd'];

/** 40 × 30 cells of wavy terrain with ties (quarter units), as four abutting tiles a b c d side by side (d touches c only), 2 m cells in EPSG:32633. */
export async function writeMosaic(folder: string): Promise<void> {
  mkdirSync(folder, { recursive: true });
  const W = 40, H = 30;
  let s = 7;
  const rnd = () => ((s = (Math.imul(s, 1664525) + 1013904223) >>> 0) / 2 ** 32);
  const g = Float32Array.from({ length: W * H }, (_, i) => Math.round((Math.sin((i % W) / 4) * Math.cos(((i / W) | 0) / 5) * 10 + rnd() * 3) * 4) / 4);
  const cuts: [number, number, number, number][] = [[0, 0, 10, 30], [10, 0, 10, 30], [20, 0, 10, 30], [30, 0, 10, 30]];
  for (let k = 0; k < 4; k++) {
    const [c0, r0, w, h] = cuts[k];
    const v = new Float32Array(w * h);
    for (let r = 0; r < h; r++) for (let c = 0; c < w; c++) v[r * w + c] = g[(r0 + r) * W + c0 + c];
    await writeGeoTiff(join(folder, `${TILE_NAMES[k]}.tif`), {
      width: w, height: h, values: v, nodata: -9999, transform: [500000 + c0 * 2, 2, 0, 6000000 - r0 * 2, 0, -2],
      crs: { epsg: 32633, geographic: false, linearUnit: 'metre' },
    });
  }
}

/** Damage the compressed cells at the end of a tile file, keeping its header, size and time; returns the restore. */
export function damageTile(path: string, keepCopy: string): () => void {
  copyFileSync(path, keepCopy);
  const st = statSync(path);
  const buf = readFileSync(path);
  buf.fill(0x55, buf.length - 24);
  writeFileSync(path, buf);
  utimesSync(path, st.atime, st.mtime);
  return () => {
    copyFileSync(keepCopy, path);
    utimesSync(path, st.atime, st.mtime);
  };
}

/** Byte for byte, every raster file of two ponds output folders on this mosaic. */
/**
 * `a` (a staged run) holds the files of a tile-by-tile run, and its rasters, VRTs and pour points are
 * byte for byte those of `b` (the in-memory mosaic run, which writes more files); its depressions.csv
 * and report.json are checked against the in-memory run by tests/cli/tiled.test.ts's driver.
 */
export function sameRasters(a: string, b: string): void {
  const files = listFiles(a).filter((f) => f !== '.sill-manifest.json');
  const rasters = ['depth.vrt', ...TILE_NAMES.map((t) => `depth/${t}.tif`), 'filled.vrt', ...TILE_NAMES.map((t) => `filled/${t}.tif`), 'labels.vrt', ...TILE_NAMES.map((t) => `labels/${t}.tif`)];
  expect(files).toEqual([...rasters, 'depressions.csv', 'pour-points.geojson', 'report.json'].sort());
  for (const f of [...rasters, 'pour-points.geojson']) expect(readFileSync(join(a, f)).equals(readFileSync(join(b, f))), f).toBe(true);
}

