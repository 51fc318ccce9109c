#!/usr/bin/env node
/**
 * `sill ponds MOSAIC -o DIR` end to end on GeoTIFF tiles: tile by tile (--tiled, W workers) against
 * the mosaic assembled in memory, as whole command-line runs on the same VRT.
 *
 * The bench's fractal terrain (bench/lib/terrain.mjs, seed 17; EPSG:32633, 1 m cells) is written as
 * one GeoTIFF, cut by GDAL into T × T abutting tiles (gdal_translate -srcwin) and stitched by
 * gdalbuildvrt; then, each under /usr/bin/time with SILL_NO_SUPERVISOR=1 (one process: its peak
 * resident set covers the worker threads too, so it is the peak of everything the run uses):
 *  - assembled  `sill ponds tiles.vrt -o DIR` — the in-memory mosaic path (every output);
 *  - tiled      `sill ponds tiles.vrt -o DIR --tiled --workers W` (rasters, VRTs and catalogues).
 * Wall, CPU, peak RSS; then every file both write is compared: the per-tile rasters, the VRTs and
 * pour-points.geojson byte for byte (depressions.csv and report.json are tested in
 * tests/cli/tiled.test.ts).
 *
 *   npm run build && node bench/tiles-cli.mjs [--size 2000] [--tiles 4] [--workers 2] [--only tiled]
 *
 * A report, not a test: exits 0 unless the files differ.
 */
import { parseArgs } from 'node:util';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, mkdirSync, readdirSync, readFileSync, rmSync, statSync } from 'node:fs';
import { tmpdir, loadavg } from 'node:os';
import { join } from 'node:path';
import { fractalTerrain } from './lib/terrain.mjs';
import { timeProcess, importDist, distPath, fmtNum, table } from './lib/util.mjs';

const { values: opt } = parseArgs({
  options: {
    size: { type: 'string', default: '2000' },
    tiles: { type: 'string', default: '4' },
    workers: { type: 'string', default: '2' },
    only: { type: 'string' },
  },
});

function files(dir, rel = '') {
  const out = [];
  for (const e of readdirSync(join(dir, rel), { withFileTypes: true })) {
    const r = rel ? `${rel}/${e.name}` : e.name;
    if (e.isDirectory()) out.push(...files(dir, r)); else out.push(r);
  }
  return out.sort();
}

const size = Number(opt.size), T = Number(opt.tiles), W = opt.workers;
const dir = mkdtempSync(join(tmpdir(), 'sill-bench-tiles-cli-'));
try {
  const { writeGeoTiff } = await importDist('io/geotiff-write.js');
  const values = fractalTerrain(size);
  await writeGeoTiff(join(dir, 'dem.tif'), { width: size, height: size, transform: [500000, 1, 0, 6000000, 0, -1], crs: { epsg: 32633 }, values, nodata: null }, { layout: 'strips' });
  mkdirSync(join(dir, 'tiles'));
  const step = Math.ceil(size / T);
  for (let r = 0; r < T; r++) for (let c = 0; c < T; c++) {
    const x0 = c * step, y0 = r * step;
    const g = spawnSync('gdal_translate', ['-q', '-srcwin', String(x0), String(y0), String(Math.min(step, size - x0)), String(Math.min(step, size - y0)), join(dir, 'dem.tif'), join(dir, 'tiles', `r${r}c${c}.tif`)], { encoding: 'utf8' });
    if (g.status !== 0) throw new Error(`gdal_translate failed: ${g.stderr}`);
  }
  rmSync(join(dir, 'dem.tif'));
  const b = spawnSync('gdalbuildvrt', ['-q', join(dir, 'tiles.vrt'), ...readdirSync(join(dir, 'tiles')).sort().map((n) => join(dir, 'tiles', n))], { encoding: 'utf8' });
  if (b.status !== 0) throw new Error(`gdalbuildvrt failed: ${b.stderr}`);

  const bin = distPath('cli/main.js');
  process.env.SILL_NO_SUPERVISOR = '1';
  const runs = {};
  for (const mode of opt.only ? [opt.only] : ['assembled', 'tiled']) {
    const out = join(dir, mode);
    const args = ['--max-old-space-size=16000', bin, 'ponds', join(dir, 'tiles.vrt'), '-o', out, '--quiet', ...(mode === 'tiled' ? ['--tiled', '--workers', W] : [])];
    const t = timeProcess(process.execPath, args);
    if (t.status !== 0) throw new Error(`${mode} failed: ${t.stderr}`);
    runs[mode] = t;
  }
  const cells = size * size;
  const rows = [['run', 'wall s', 'CPU s', 'peak RSS MiB', 'B/cell', 'Mcells/s', 'cells/s per core']];
  for (const [m, t] of Object.entries(runs)) {
    const cores = m === 'tiled' ? Number(W) : 1;
    rows.push([m === 'tiled' ? `tiled (${T}×${T} tiles, ${W} workers)` : 'assembled in memory', fmtNum(t.ms / 1000), fmtNum(t.cpuMs / 1000), fmtNum(t.maxRss / 2 ** 20, 0),
      fmtNum(t.maxRss / cells, 1), fmtNum(cells / t.ms / 1000), fmtNum(cells / (t.ms / 1000) / cores, 0)]);
  }
  console.log(`ponds -o DIR on ${size}×${size} fractal terrain (${cells / 1e6} M cells) as ${T}×${T} GeoTIFF tiles cut by GDAL, load average ${loadavg().map((x) => x.toFixed(1)).join(' ')}`);
  console.log(table(rows));
  if (runs.assembled && runs.tiled) {
    console.log(`ratio tiled/assembled: wall ${fmtNum(runs.tiled.ms / runs.assembled.ms)}, CPU ${fmtNum(runs.tiled.cpuMs / runs.assembled.cpuMs)}, peak RSS ${fmtNum(runs.tiled.maxRss / runs.assembled.maxRss)}`);
    const a = join(dir, 'assembled'), t = join(dir, 'tiled');
    const shared = files(t).filter((f) => f.endsWith('.tif') || f.endsWith('.vrt') || f === 'pour-points.geojson');
    const differ = shared.filter((f) => !readFileSync(join(a, f)).equals(readFileSync(join(t, f))));
    const bytes = shared.reduce((s, f) => s + statSync(join(t, f)).size, 0);
    console.log(`files both write (${shared.length}, ${fmtNum(bytes / 2 ** 20)} MiB: per-tile rasters, VRTs, pour points) byte for byte equal: ${differ.length === 0 ? 'yes' : `NO (${differ.slice(0, 5).join(', ')})`}`);
    if (differ.length) process.exitCode = 1;
  }
} finally { rmSync(dir, { recursive: true, force: true }); }
