#!/usr/bin/env node
/**
 * `sill ponds MOSAIC -o DIR --tiled` on a mosaic far larger than memory would hold assembled:
 * T × T GeoTIFF tiles of S × S cells (default 8 × 8 of 5000²: 40 000 × 40 000 = 1.6 billion cells).
 *
 * The terrain is generated tile by tile, so no step of the bench holds the mosaic: a seamless
 * fractal of our own (value noise on hashed integer lattices, octaves from 4096 cells down to 4,
 * amplitude ∝ wavelength^0.8, plus ±1 cm of hashed jitter; float32, EPSG:32633, 1 m cells). Each
 * cell's value depends only on its global position, so the tiles abut exactly. Tiles are written
 * as plain strips by sill's writer (at this size, cutting one 6.4 GB file with gdal_translate would
 * need that file first; tests/cli/tiled.test.ts and bench/tiles-cli.mjs use GDAL-cut tiles).
 *
 * Then one whole `sill ponds DIR/tiles -o DIR/out --tiled --workers W` under /usr/bin/time with
 * SILL_NO_SUPERVISOR=1 (one process: its peak resident set covers its worker threads, so it is the
 * peak of the run): wall, CPU, peak RSS, cells per second per core end to end (tiles read, every
 * output written), the files written and their size, and the report's Euler check and counts.
 * Exactness against the single grid is not checked here (the single grid does not fit); it is
 * tested on random tilings (tests/tiles, tests/cli/tiled.test.ts) and at 4000² by bench/tiles-cli.mjs.
 *
 *   npm run build && node bench/tiles-huge.mjs [--tiles 8] [--tile 5000] [--workers 2] [--dir D] [--keep]
 *   node bench/tiles-huge.mjs --dir D --generate-only    # only write the tiles (a later run with --dir D reuses them)
 *
 * A report, not a test. Needs about 7 GB of disk for the tiles and as much again for the outputs
 * at the default size; results go to bench/out/tiles-huge-<cells>.json.
 */
import { parseArgs } from 'node:util';
import { mkdtempSync, mkdirSync, readdirSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir, loadavg, cpus, totalmem } from 'node:os';
import { join } from 'node:path';
import { timeProcess, importDist, distPath, BENCH_DIR } from './lib/util.mjs';

const { values: opt } = parseArgs({
  options: {
    tiles: { type: 'string', default: '8' },
    tile: { type: 'string', default: '5000' },
    workers: { type: 'string', default: '2' },
    dir: { type: 'string' },
    keep: { type: 'boolean', default: false },
    'generate-only': { type: 'boolean', default: false },
  },
});
const T = Number(opt.tiles), S = Number(opt.tile), N = T * S;

/** Integer hash of a lattice point and an octave, to [0, 1). */
function hash(ix, iy, o) {
  let h = Math.imul(ix, 0x27d4eb2d) ^ Math.imul(iy, 0x165667b1) ^ Math.imul(o + 1, 0x9e3779b9);
  h = Math.imul(h ^ (h >>> 15), 0x85ebca6b);
  h = Math.imul(h ^ (h >>> 13), 0xc2b2ae35);
  return ((h ^ (h >>> 16)) >>> 0) / 4294967296;
}

const OCTAVES = [];
for (let w = 4096, o = 0; w >= 4; w /= 2, o++) OCTAVES.push({ w, o, amp: 0.02 * w ** 0.8 });

/** The tile at (tr, tc): S × S float32 values, row-major. */
function tileValues(tr, tc) {
  const v = new Float32Array(S * S);
  const x0 = tc * S, y0 = tr * S;
  const wx = new Float64Array(S), ix = new Int32Array(S);
  for (const { w, o, amp } of OCTAVES) {
    for (let c = 0; c < S; c++) {
      const gx = (x0 + c) / w, fx = Math.floor(gx), t = gx - fx;
      ix[c] = fx; wx[c] = t * t * (3 - 2 * t);
    }
    for (let r = 0; r < S; r++) {
      const gy = (y0 + r) / w, fy = Math.floor(gy), t = gy - fy, sy = t * t * (3 - 2 * t);
      const row = r * S;
      let lastX = -2147483648, a00 = 0, a10 = 0, a01 = 0, a11 = 0;
      for (let c = 0; c < S; c++) {
        const X = ix[c];
        if (X !== lastX) {
          a00 = hash(X, fy, o); a10 = hash(X + 1, fy, o); a01 = hash(X, fy + 1, o); a11 = hash(X + 1, fy + 1, o);
          lastX = X;
        }
        const sx = wx[c];
        const top = a00 + (a10 - a00) * sx, bot = a01 + (a11 - a01) * sx;
        v[row + c] += amp * (top + (bot - top) * sy);
      }
    }
  }
  for (let r = 0; r < S; r++) for (let c = 0; c < S; c++) v[r * S + c] += 0.01 * (hash(x0 + c, y0 + r, 99) - 0.5);
  return v;
}

function files(dir, rel = '') {
  const out = [];
  for (const e of readdirSync(join(dir, rel), { withFileTypes: true })) {
    const r = rel ? `${rel}/${e.name}` : e.name;
    if (e.isDirectory()) out.push(...files(dir, r)); else out.push(r);
  }
  return out;
}

const gib = (b) => `${(b / 2 ** 30).toFixed(2)} GiB`;
const base = opt.dir ?? mkdtempSync(join(tmpdir(), 'sill-bench-tiles-huge-'));
mkdirSync(join(base, 'tiles'), { recursive: true });
console.log(`sill ponds tile by tile on ${T} × ${T} tiles of ${S}² = ${N} × ${N} cells (${(N * N / 1e9).toFixed(2)} billion); ${cpus().length} cores, ${(totalmem() / 2 ** 30).toFixed(0)} GiB, load average ${loadavg()[0].toFixed(1)}; folder ${base}`);
try {
  const { writeGeoTiff } = await importDist('io/geotiff-write.js');
  const g0 = performance.now();
  for (let tr = 0; tr < T; tr++) {
    for (let tc = 0; tc < T; tc++) {
      const path = join(base, 'tiles', `r${tr}c${tc}.tif`);
      try { if (statSync(path).size > S * S * 4) continue; } catch { /* not yet written */ }
      await writeGeoTiff(path, { width: S, height: S, transform: [500000 + tc * S, 1, 0, 6000000 - tr * S, 0, -1], crs: { epsg: 32633 }, values: tileValues(tr, tc), nodata: null }, { layout: 'strips' });
    }
    process.stderr.write(`bench/tiles-huge: tiles of row ${tr + 1}/${T} written (${((performance.now() - g0) / 1000).toFixed(0)} s)\n`);
  }
  if (opt['generate-only']) { console.log(`tiles written to ${join(base, 'tiles')}; run again with --dir ${base} to analyse them`); process.exit(0); }
  const out = join(base, 'out');
  rmSync(out, { recursive: true, force: true });
  const la0 = loadavg()[0];
  process.env.SILL_NO_SUPERVISOR = '1';
  const t = timeProcess(process.execPath, [distPath('cli/main.js'), 'ponds', join(base, 'tiles'), '-o', out, '--tiled', '--workers', opt.workers, '--quiet'], { stdout: join(base, 'stdout.txt') });
  const la1 = loadavg()[0];
  if (t.status !== 0) {
    console.log(`FAILED (exit ${t.status}): ${t.stderr.trim().split('\n').slice(-3).join(' | ')}`);
    process.exitCode = 0;
  } else {
    const written = files(out);
    let bytes = 0;
    for (const f of written) bytes += statSync(join(out, f)).size;
    // the small members only: at this size report.json is many GB (one record per depression), more than one string holds
    const { readJsonMembers } = await importDist('io/json-head.js');
    const report = readJsonMembers(join(out, 'report.json'), ['euler', 'counts', 'tiled']);
    const cores = Number(opt.workers);
    const res = {
      date: new Date().toISOString(), cells: N * N, tiles: T * T, tileCells: S * S, workers: cores, loadStart: la0, loadEnd: la1,
      wallS: t.ms / 1000, cpuS: t.cpuMs / 1000, peakRss: t.maxRss, files: written.length, outputBytes: bytes,
      cellsPerSecondPerCore: (N * N) / (t.ms / 1000) / cores,
      euler: report.euler, depressions: report.counts?.depressions ?? null, tiled: report.tiled,
    };
    console.log(`wall ${res.wallS.toFixed(0)} s, CPU ${res.cpuS.toFixed(0)} s, peak RSS ${gib(res.peakRss)} (${(res.peakRss / (N * N)).toFixed(2)} B/cell)`);
    console.log(`${(res.cellsPerSecondPerCore / 1e6).toFixed(2)} M cells/s per core end to end (${cores} workers; Barnes 2016 reports 2.4 M cells/s per core for parallel Priority-Flood)`);
    console.log(`${res.files} files, ${gib(bytes)} written; ${res.depressions} depressions; Euler check ${report.euler?.holds ? 'holds' : 'FAILS'} (χ = ${report.euler?.characteristic})`);
    console.log(`load average ${la0.toFixed(1)} at the start, ${la1.toFixed(1)} at the end`);
    mkdirSync(join(BENCH_DIR, 'out'), { recursive: true });
    writeFileSync(join(BENCH_DIR, 'out', `tiles-huge-${N}.json`), JSON.stringify(res, null, 1) + '\n');
  }
} finally {
  if (!opt.keep) rmSync(base, { recursive: true, force: true });
}
