#!/usr/bin/env node
/**
 * Writing the three rasters of `ponds -o` (filled.tif, depth.tif, labels.tif), as the command
 * does (all three started at once), on the bench's fractal terrain:
 *
 *   npm run build && node bench/geotiff-write.mjs [--sizes 2000,4000] [--repeat 3] [--seed 17] [--settings]
 *
 *  - `strips`: the plain uncompressed writer (the layout every raster had before COGs);
 *  - `cog, 1 thread` and `cog, 2 threads`: Cloud Optimized GeoTIFFs, tiles compressed on this
 *    thread or on worker threads;
 *  - with --settings, the DEFLATE level and strategy candidates one raster at a time
 *    (time and size), which is how the defaults were chosen.
 * Runs alternate between the writers so they see the same load from other work; medians of
 * wall-clock and CPU time (user + system, all threads of the process) are printed, with the
 * file sizes and the ratios to the strip writer measured in the same run.
 * A report, not a test: it exits 0 unless the script itself breaks.
 */
import { parseArgs } from 'node:util';
import { mkdtempSync, rmSync, statSync } from 'node:fs';
import { tmpdir, loadavg, cpus } from 'node:os';
import { join } from 'node:path';
import { fractalTerrain } from './lib/terrain.mjs';
import { importDist } from './lib/util.mjs';

const { values: opt } = parseArgs({
  options: {
    sizes: { type: 'string', default: '2000,4000' },
    repeat: { type: 'string', default: '3' },
    seed: { type: 'string', default: '17' },
    settings: { type: 'boolean', default: false },
  },
});
const sizes = opt.sizes.split(',').map(Number);
const repeat = Number(opt.repeat);
const io = await importDist('io/geotiff-write.js');
const hydro = await importDist('hydro/ponds.js');
const gridMod = await importDist('surface/grid.js');
if (!io || !hydro || !gridMod) {
  console.error('bench: run `npm run build` first');
  process.exit(1);
}
const { writeGeoTiff } = io;

const median = (a) => [...a].sort((x, y) => x - y)[Math.floor(a.length / 2)];
const fmt = (ms) => (ms >= 1000 ? `${(ms / 1000).toFixed(2)} s` : `${ms.toFixed(0)} ms`);
const mb = (b) => `${(b / 1e6).toFixed(1)} MB`;

async function timed(fn) {
  const c0 = process.cpuUsage();
  const t0 = performance.now();
  await fn();
  const t1 = performance.now();
  const c = process.cpuUsage(c0);
  return { ms: t1 - t0, cpu: (c.user + c.system) / 1000 };
}

console.log(`geotiff-write bench: ${cpus().length} cores, ${cpus()[0]?.model}, node ${process.version}, load average ${loadavg().map((x) => x.toFixed(1)).join(' ')}`);
for (const size of sizes) {
  const z = fractalTerrain(size, { seed: Number(opt.seed) });
  const transform = [512000, 10, 0, 5874000 + size * 10, 0, -10];
  const grid = new gridMod.Grid({ width: size, height: size, values: z, transform, crs: { epsg: 32633 }, nodata: null });
  const t0 = performance.now();
  const r = hydro.ponds(grid, {});
  console.log(`\n${size} × ${size}: ponds (not timed below) ${fmt(performance.now() - t0)}, ${r.hierarchy.count} depressions`);
  const base = { width: size, height: size, transform, crs: { epsg: 32633 } };
  const rasters = [
    ['filled.tif', { ...base, values: r.rasters.filled, nodata: -9999 }, 'average'],
    ['depth.tif', { ...base, values: r.rasters.depth, nodata: -9999 }, 'average'],
    ['labels.tif', { ...base, values: r.rasters.labels, nodata: -1 }, 'nearest'],
  ];
  const dir = mkdtempSync(join(tmpdir(), 'sill-bench-tif-'));
  const writers = [
    ['strips (uncompressed, before)', { layout: 'strips' }],
    ['cog, 1 thread', { threads: 1 }],
    ['cog, 2 threads', { threads: 2 }],
  ];
  const samples = writers.map(() => ({ ms: [], cpu: [], bytes: 0 }));
  // warm-up: starts the worker pool and compiles the code paths
  await Promise.all(rasters.map(([n, ras, ov]) => writeGeoTiff(join(dir, `warm-${n}`), ras, { overviews: ov, threads: 2 })));
  for (let k = 0; k < repeat; k++) {
    for (let w = 0; w < writers.length; w++) {
      const [, options] = writers[w];
      const t = await timed(() => Promise.all(rasters.map(([n, ras, ov]) => writeGeoTiff(join(dir, `${w}-${n}`), ras, { ...options, overviews: ov }))));
      samples[w].ms.push(t.ms);
      samples[w].cpu.push(t.cpu);
      samples[w].bytes = rasters.reduce((s, [n]) => s + statSync(join(dir, `${w}-${n}`)).size, 0);
    }
  }
  const ref = median(samples[0].ms);
  console.log('| writer (three rasters) | wall | CPU | wall / strips | files |');
  console.log('| --- | --- | --- | --- | --- |');
  writers.forEach(([name], w) => {
    const s = samples[w];
    console.log(`| ${name} | ${fmt(median(s.ms))} | ${fmt(median(s.cpu))} | ${(median(s.ms) / ref).toFixed(2)} × | ${mb(s.bytes)} |`);
  });

  if (opt.settings) {
    const candidates = [
      ['level 1, default strategy', { level: 1, strategy: 'default' }],
      ['level 1, run-length only', { level: 1, strategy: 'rle' }],
      ['level 6, default strategy', { level: 6, strategy: 'default' }],
      ['level 6, run-length only', { level: 6, strategy: 'rle' }],
    ];
    console.log('\n| raster | DEFLATE setting | wall (1 thread) | CPU | file |');
    console.log('| --- | --- | --- | --- | --- |');
    for (const [n, ras, ov] of rasters) {
      for (const [label, o] of candidates) {
        const ms = [], cpu = [];
        for (let k = 0; k < repeat; k++) {
          const t = await timed(() => writeGeoTiff(join(dir, `s-${n}`), ras, { ...o, overviews: ov, threads: 1 }));
          ms.push(t.ms);
          cpu.push(t.cpu);
        }
        console.log(`| ${n} | ${label} | ${fmt(median(ms))} | ${fmt(median(cpu))} | ${mb(statSync(join(dir, `s-${n}`)).size)} |`);
      }
    }
  }
  rmSync(dir, { recursive: true, force: true });
}
console.log(`\nload average at the end ${loadavg().map((x) => x.toFixed(1)).join(' ')}`);
